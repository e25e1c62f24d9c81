import type { Cause } from '../../checks/causes/types.js';
import { latestSightings, listIncidents } from '../incidents/store.js';
import type { Incident } from '../incidents/types.js';
import type { Runtime } from '../runtime.js';
import { findingsQuery, funnelSummaryQuery, judgedDaysQuery, type FunnelDaySummary, type StoredFinding } from '../state/summary.js';
import { formatDayPicture, formatFindings, type JudgedDay } from './report.js';

export interface RangeSummary {
  from: string;
  to: string;
  funnels: FunnelDaySummary[];
  findings: StoredFinding[];
  judged: JudgedDay[];
  incidents: Array<Incident & { cause: Cause | null; symptoms: number }>;
}

export async function loadSummary(rt: Runtime, from: string, to: string): Promise<RangeSummary> {
  const lastSteps = Object.fromEntries(rt.flows.map((flow) => [flow.id, flow.steps.length - 1]));
  const [funnels, findings, judged] = await Promise.all([
    rt.state.query<FunnelDaySummary>(funnelSummaryQuery(rt.stateSchema, from, to, lastSteps)),
    rt.state.query<StoredFinding>(findingsQuery(rt.stateSchema, from, to)),
    rt.state.query<JudgedDay>(judgedDaysQuery(rt.stateSchema, from, to)),
  ]);
  const incidents = await listIncidents(rt.state, rt.stateSchema, { flows: rt.flows.map((flow) => flow.id), from, to });
  const sightings = await latestSightings(rt.state, rt.stateSchema, incidents.map((incident) => incident.id));
  return {
    from,
    to,
    funnels: funnels.rows,
    findings: findings.rows,
    judged: judged.rows,
    incidents: incidents.map((incident) => {
      const latest = sightings.get(incident.id);
      return { ...incident, cause: latest?.cause ?? null, symptoms: latest?.symptoms.length ?? 0 };
    }),
  };
}

/** Human summary: the day-by-day picture of the last `pictureDays` days, then the findings of the range. */
export function formatSummary(rt: Runtime, summary: RangeSummary, pictureDays: number): string {
  const days = [...new Set(summary.funnels.map((row) => row.day))].sort();
  const shownFrom = days[Math.max(0, days.length - pictureDays)] ?? summary.from;
  const picture = formatDayPicture(
    summary.funnels.filter((row) => row.day >= shownFrom),
    summary.findings,
    summary.judged,
    rt.flows.map((flow) => ({ id: flow.id, platforms: flow.platforms })),
  );
  const notReady = summary.judged.filter((j) => j.verdict === 'not_ready');
  const incidentLines = summary.incidents.map(
    (i) =>
      `  ${i.status.padEnd(8)} ${i.severity.padEnd(4)} ${i.since}..${i.lastSeenDay} ${i.flow} [${i.causeLabel}] ${i.title}${i.muted ? ' (muted)' : ''}\n      cause: ${i.cause?.sentence ?? '-'}`,
  );
  const lines = [
    `plumbline: ${summary.from} to ${summary.to}`,
    picture,
    `\nFindings (${summary.findings.length}, ${summary.findings.filter((f) => f.muted).length} muted):`,
    formatFindings(summary.findings),
    `\nIncidents (${summary.incidents.length}):`,
    ...(incidentLines.length > 0 ? incidentLines : ['  none']),
  ];
  if (notReady.length > 0) {
    lines.push('\nNot judged yet:');
    for (const j of notReady) lines.push(`  ${j.day} ${j.flow}: ${j.reason ?? ''}`);
  }
  return lines.join('\n');
}
