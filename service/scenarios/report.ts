/**
 * What `npm run evaluate` prints and the diagnostic file it writes: the
 * figures, the per-type table, and per seed every truth with the incidents
 * that went to it, every false incident and the cold start's findings, so
 * people fixing detection can see why a figure is what it is.
 */
import { EXPECTATIONS } from './catalogue.js';
import type { ObservedIncident, ScenarioRun } from './replay.js';
import { isAlert, type Figures, type Score } from './score.js';

/** The figures under their printed names, rounded for reading. */
export function namedFigures(figures: Figures): Record<string, number> {
  const round = (value: number, digits = 2) => (Number.isFinite(value) ? Number(value.toFixed(digits)) : Number.NaN);
  return {
    eval_recall: round(figures.recall),
    eval_label_accuracy: round(figures.labelAccuracy),
    eval_incidents_per_truth: round(figures.incidentsPerTruth),
    eval_false_per_flow_30d: round(figures.falsePerFlow30d),
    eval_cold_start_findings: figures.coldStartFindings,
    eval_label_accuracy_all: round(figures.labelAccuracyAll),
    eval_alerts_per_truth: round(figures.alertsPerTruth),
    eval_false_alerts_per_flow_30d: round(figures.falseAlertsPerFlow30d),
    truths: figures.truths,
    found: figures.found,
    false_incidents: figures.falseIncidents,
    clean_flow_days: figures.cleanFlowDays,
  };
}

function table(header: readonly string[], rows: ReadonlyArray<readonly string[]>): string {
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: readonly string[]) => cells.map((c, i) => (i === cells.length - 1 ? c : c.padEnd(widths[i]!))).join('  ').trimEnd();
  return [line(header), ...rows.map(line)].join('\n');
}

const show = (value: number) => (Number.isFinite(value) ? value.toFixed(2) : '-');

export function formatScore(score: Score): string {
  const figures = Object.entries(namedFigures(score.overall)).map(([name, value]) => [name, Number.isFinite(value) ? String(value) : '-'] as const);
  const types = score.types.map((t) => [
    t.type,
    String(t.truths),
    String(t.minor),
    String(t.found),
    show(t.recall),
    show(t.labelAccuracy),
    show(t.incidentsPerTruth),
    show(t.alertsPerTruth),
    EXPECTATIONS[t.type].label,
    t.labels || '-',
  ]);
  return `${table(['figure', 'value'], figures)}\n\n${table(
    ['type', 'truths', 'minor', 'found', 'recall', 'label', 'inc/truth', 'alerts/truth', 'expected', 'first incident labels'],
    types,
  )}`;
}

function incidentLine(incident: ObservedIncident): string {
  const scope = [incident.platform ?? 'all', incident.version].filter(Boolean).join(' ');
  const segment = incident.segment ? ` ${incident.segment.dimension}=${incident.segment.value}` : '';
  return `${incident.openedDay}..${incident.lastSeenDay} ${incident.causeLabel}${segment} [${scope}] ${incident.severity}${isAlert(incident) ? ' (chat)' : incident.chat ? ' (chat note)' : ''}: ${incident.title}\n      cause: ${incident.sentence}`;
}

/** Markdown: per seed, the scenario, each truth with its incidents, the false incidents and the cold start's findings. */
export function formatDiagnostics(runs: readonly ScenarioRun[], score: Score): string {
  const out: string[] = ['# plumbline evaluation: diagnostics', ''];
  for (const run of runs) {
    const result = score.seeds.find((s) => s.seed === run.seed)!;
    const s = run.summary;
    out.push(
      `## seed ${run.seed}: ${s.app}`,
      '',
      `${s.from} .. ${s.to} (${s.days} days, backfill of ${s.backfillDays}), ${s.timezone}, about ${s.journeysPerDay} journeys a weekday, ${s.events} events; platforms ${s.platforms.join(', ')}; flows ${s.flows.map((f) => `${f.id} (${f.steps} steps)`).join(', ')}; dimensions ${s.dimensions.join(', ') || 'none'}`,
      '',
      '### truths',
      '',
    );
    for (const t of result.truths) {
      const truth = t.truth;
      const where = [truth.platform ?? 'all platforms', truth.version, truth.segment ? `${truth.segment.dimension}=${truth.segment.value}` : null].filter(Boolean).join(' ');
      const verdict = !t.found ? 'MISSED' : `${t.incidents.length} incident(s), first label ${t.labelRight ? 'right' : 'WRONG'}`;
      out.push(`- **${truth.id}** ${truth.firstDay}..${truth.lastDay} ${where}, expect ${truth.expectedLabel}${truth.alert ? '' : ' (note only)'}${truth.minor ? ', minor' : ''}: ${verdict}`);
      out.push(`  ${truth.description}`);
      for (const incident of t.incidents) out.push(`    - ${incidentLine(incident)}`);
    }
    out.push('', `### false incidents (${result.falseIncidents.length}, ${result.cleanFlowDays} clean flow-days)`, '');
    for (const incident of result.falseIncidents) out.push(`- ${incident.flow}: ${incidentLine(incident)}`);
    out.push('', `### cold start: findings on the first 28 days (${run.coldStart.length})`, '');
    for (const f of run.coldStart) out.push(`- ${f.day} ${f.flow} ${f.check}/${f.kind} ${f.platform ?? 'all'} ${f.severity}: ${f.message}`);
    out.push('');
  }
  return out.join('\n');
}
