import type { Runtime } from '../runtime.js';
import { findingsQuery, funnelSummaryQuery, judgedDaysQuery, type FunnelDaySummary, type StoredFinding } from '../state/summary.js';
import { formatDayPicture, formatFindings, type JudgedDay } from './report.js';

export interface RangeSummary {
  from: string;
  to: string;
  funnels: FunnelDaySummary[];
  findings: StoredFinding[];
  judged: JudgedDay[];
}

export async function loadSummary(rt: Runtime, from: string, to: string): Promise<RangeSummary> {
  const lastSteps = Object.fromEntries(rt.flows.map((flow) => [flow.id, flow.steps.length - 1]));
  const [funnels, findings, judged] = await Promise.all([
    rt.state.query<FunnelDaySummary>(funnelSummaryQuery(rt.stateSchema, from, to, lastSteps)),
    rt.state.query<StoredFinding>(findingsQuery(rt.stateSchema, from, to)),
    rt.state.query<JudgedDay>(judgedDaysQuery(rt.stateSchema, from, to)),
  ]);
  return { from, to, funnels: funnels.rows, findings: findings.rows, judged: judged.rows };
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
  const lines = [
    `plumbline: ${summary.from} to ${summary.to}`,
    picture,
    `\nFindings (${summary.findings.length}, ${summary.findings.filter((f) => f.muted).length} muted):`,
    formatFindings(summary.findings),
  ];
  if (notReady.length > 0) {
    lines.push('\nNot judged yet:');
    for (const j of notReady) lines.push(`  ${j.day} ${j.flow}: ${j.reason ?? ''}`);
  }
  return lines.join('\n');
}
