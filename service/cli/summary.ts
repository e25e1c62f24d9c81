import { latestSightings, listIncidents, loadSightings } from '../incidents/store.js';
import type { Runtime } from '../runtime.js';
import { findingsQuery, funnelSummaryQuery, judgedDaysQuery, type FunnelDaySummary } from '../state/summary.js';
import { foldFindings, formatDayPicture, formatFindings, formatIncidents, rankIncidents, type JudgedDay, type LinkedFinding, type ListedIncident } from './report.js';

export interface RangeSummary {
  from: string;
  to: string;
  funnels: FunnelDaySummary[];
  /** Each with the id of the incident it is a symptom of. */
  findings: LinkedFinding[];
  judged: JudgedDay[];
  /** Most pressing first (see `rankIncidents`). */
  incidents: ListedIncident[];
}

export async function loadSummary(rt: Runtime, from: string, to: string): Promise<RangeSummary> {
  const lastSteps = Object.fromEntries(rt.flows.map((flow) => [flow.id, flow.steps.length - 1]));
  const [funnels, findings, judged] = await Promise.all([
    rt.state.query<FunnelDaySummary>(funnelSummaryQuery(rt.stateSchema, from, to, lastSteps)),
    rt.state.query<LinkedFinding>(findingsQuery(rt.stateSchema, from, to)),
    rt.state.query<JudgedDay>(judgedDaysQuery(rt.stateSchema, from, to)),
  ]);
  const incidents = await listIncidents(rt.state, rt.stateSchema, { flows: rt.flows.map((flow) => flow.id), from, to });
  const ids = incidents.map((incident) => incident.id);
  const [sightings, latest] = await Promise.all([loadSightings(rt.state, rt.stateSchema, ids), latestSightings(rt.state, rt.stateSchema, ids)]);
  // A finding is a symptom of the incident whose sighting on its day lists it.
  const findingKey = (f: { flow: string; day: string; check: string; seriesKey: string; kind: string }) => `${f.flow}|${f.day}|${f.check}|${f.seriesKey}|${f.kind}`;
  const incidentOf = new Map(sightings.flatMap((sighting) => sighting.symptoms.map((symptom) => [findingKey(symptom), sighting.incidentId] as const)));
  return {
    from,
    to,
    funnels: funnels.rows,
    findings: findings.rows.map((finding) => ({ ...finding, incident: incidentOf.get(findingKey(finding)) ?? null })),
    judged: judged.rows,
    incidents: rankIncidents(
      incidents.map((incident) => {
        const sighting = latest.get(incident.id);
        return { ...incident, cause: sighting?.cause ?? null, symptoms: sighting?.symptoms.length ?? 0 };
      }),
    ),
  };
}

/** Days of the day-by-day picture unless `--days` says otherwise: two weeks of two flows leave the incidents on the first screen. */
export const PICTURE_DAYS = 14;

export interface SummaryOptions {
  /** Days shown in the day-by-day picture, ending with the newest. */
  pictureDays: number;
  /** Every finding on its own line instead of folded. */
  allFindings: boolean;
}

/**
 * What an analyst reads first, in that order: the day-by-day picture of the
 * last days, the incidents (cause first), the days not judged yet, then the
 * findings folded per incident, check and platform (or every one).
 */
export function formatSummary(flows: Array<{ id: string; platforms: string[] }>, summary: RangeSummary, options: SummaryOptions): string {
  const days = [...new Set(summary.funnels.map((row) => row.day))].sort();
  const shownFrom = days[Math.max(0, days.length - options.pictureDays)] ?? summary.from;
  const picture = formatDayPicture(
    summary.funnels.filter((row) => row.day >= shownFrom),
    summary.findings,
    summary.judged,
    flows,
  );
  const open = summary.incidents.filter((i) => i.status !== 'resolved').length;
  const notReady = summary.judged.filter((j) => j.verdict === 'not_ready');
  const muted = summary.findings.filter((f) => f.muted).length;
  const lines = [
    `plumbline: ${summary.from} to ${summary.to}`,
    picture,
    `\nIncidents (${summary.incidents.length}, ${open} not resolved), most pressing first:`,
    ...formatIncidents(summary.incidents),
  ];
  if (notReady.length > 0) {
    lines.push('\nNot judged yet:');
    for (const j of notReady) lines.push(`  ${j.day} ${j.flow}: ${j.reason ?? ''}`);
  }
  const counted = `${summary.findings.length}${muted > 0 ? `, ${muted} muted` : ''}`;
  if (options.allFindings) {
    lines.push(`\nFindings (${counted}), #n: the incident:`, formatFindings(summary.findings, summary.incidents));
  } else if (summary.findings.length === 0) {
    lines.push('\nNo findings.');
  } else {
    lines.push(
      `\nFindings (${counted}), one line per incident, check and platform: count, highest severity, days (every finding: --findings):`,
      ...foldFindings(summary.findings, summary.incidents),
    );
  }
  return lines.join('\n');
}
