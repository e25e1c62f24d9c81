import type { Severity } from '../../checks/types.js';
import type { FunnelDaySummary, StoredFinding } from '../state/summary.js';

const SEVERITY_ORDER: Severity[] = ['page', 'warn', 'note'];
const WEEKDAY = ['Sun', 'Mon', 'Tue', 'Wed', 'Thu', 'Fri', 'Sat'];

export interface JudgedDay {
  flow: string;
  day: string;
  verdict: 'judged' | 'not_ready';
  reason: string | null;
}

function percent(numerator: number, denominator: number): string {
  return denominator > 0 ? `${((100 * numerator) / denominator).toFixed(1)}%` : '-';
}

/**
 * The day-by-day picture: per flow, people entering and completing per
 * platform, with a mark on days that have findings (!), were not ready (?)
 * or were only noted or muted (·).
 */
export function formatDayPicture(
  summary: FunnelDaySummary[],
  findings: StoredFinding[],
  judged: JudgedDay[],
  flows: Array<{ id: string; platforms: string[] }>,
): string {
  const out: string[] = [];
  for (const flow of flows) {
    const rows = summary.filter((row) => row.flow === flow.id);
    const days = [...new Set(rows.map((row) => row.day))].sort();
    if (days.length === 0) continue;
    out.push(`\n${flow.id}: people entering / completed (conversion) per platform`);
    out.push(['day           ', ...flow.platforms.map((p) => p.padEnd(22))].join(' '));
    for (const day of days) {
      const cells = flow.platforms.map((platform) => {
        const row = rows.find((r) => r.day === day && r.platform === platform);
        return row ? `${row.entered} / ${row.completed} (${percent(row.completed, row.entered)})`.padEnd(22) : '-'.padEnd(22);
      });
      const dayFindings = findings.filter((f) => f.flow === flow.id && f.day === day);
      const verdict = judged.find((j) => j.flow === flow.id && j.day === day);
      const loud = dayFindings.filter((f) => !f.muted && f.severity !== 'note');
      const mark = verdict?.verdict === 'not_ready' ? '?' : loud.length > 0 ? '!' : dayFindings.length > 0 ? '·' : ' ';
      const weekday = WEEKDAY[new Date(`${day}T12:00:00Z`).getUTCDay()]!;
      const checks = [...new Set(loud.map((f) => f.check))].join(',');
      out.push(`${day} ${weekday}${mark} ${cells.join(' ')}${checks ? ` ${checks}` : ''}`);
    }
  }
  return out.join('\n');
}

/** Findings grouped by flow, then severity, one line each. */
export function formatFindings(findings: StoredFinding[]): string {
  if (findings.length === 0) return '\nNo findings.';
  const out: string[] = [];
  const flows = [...new Set(findings.map((f) => f.flow))].sort();
  for (const flow of flows) {
    out.push(`\n${flow}`);
    for (const severity of SEVERITY_ORDER) {
      const group = findings.filter((f) => f.flow === flow && f.severity === severity);
      if (group.length === 0) continue;
      out.push(`  ${severity} (${group.length})`);
      for (const f of group) {
        const where = [f.platform, f.version].filter((part) => part !== null && part !== '' && part !== '*').join(' ');
        const extras = [f.calendar ? `calendar: ${f.calendar}` : '', f.muted ? `muted: ${f.muted}` : ''].filter(Boolean).join('; ');
        out.push(`    ${f.day} ${f.check}${where ? ` [${where}]` : ''} ${f.message}${extras ? ` (${extras})` : ''}`);
      }
    }
  }
  return out.join('\n');
}
