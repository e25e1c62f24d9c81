import type { Cause } from '../../checks/causes/types.js';
import { SEVERITIES, SEVERITY_RANK } from '../../checks/severity.js';
import type { Severity } from '../../checks/types.js';
import { addDays } from '../config/definitions.js';
import { severityLabel } from '../present/marks.js';
import { causeWords } from '../present/present.js';
import type { Incident } from '../incidents/types.js';
import { isLearningReason } from '../pipeline/judge.js';
import type { FunnelDaySummary, StoredFinding } from '../state/summary.js';

const SEVERITY_ORDER: Severity[] = [...SEVERITIES].reverse();
const WEEKDAY = ['Sun', 'Mon', 'Tue', 'Wed', 'Thu', 'Fri', 'Sat'];

export interface JudgedDay {
  flow: string;
  day: string;
  verdict: 'judged' | 'not_ready';
  reason: string | null;
}

/** An incident with its latest cause and how many symptoms that sighting had. */
export type ListedIncident = Incident & { cause: Cause | null; symptoms: number };

/** A finding and the incident it is a symptom of (null when that incident lies outside the range). */
export type LinkedFinding = StoredFinding & { incident: string | null };

function percent(numerator: number, denominator: number): string {
  return denominator > 0 ? `${((100 * numerator) / denominator).toFixed(1)}%` : '-';
}

/** Consecutive days as ranges: "2026-10-14..2026-10-20, 2026-10-22"; past `max` ranges, "and N more days". */
export function dayRanges(days: Iterable<string>, max = Infinity): string {
  const sorted = [...new Set(days)].sort();
  const ranges: Array<{ from: string; to: string; days: number }> = [];
  for (const day of sorted) {
    const last = ranges[ranges.length - 1];
    if (last && addDays(last.to, 1) === day) Object.assign(last, { to: day, days: last.days + 1 });
    else ranges.push({ from: day, to: day, days: 1 });
  }
  const shown = ranges.slice(0, max).map((r) => (r.from === r.to ? r.from : `${r.from}..${r.to}`));
  const rest = ranges.slice(max).reduce((sum, r) => sum + r.days, 0);
  return [...shown, ...(rest > 0 ? [`and ${rest} more day${rest === 1 ? '' : 's'}`] : [])].join(', ');
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
      // A day judged while the flow was still learning its baseline says so ("learning: 12 of 28 days").
      const learning = verdict?.verdict === 'judged' && isLearningReason(verdict.reason) ? verdict.reason! : '';
      const notes = [checks, learning].filter((part) => part !== '').join(' ');
      out.push(`${day} ${weekday}${mark} ${cells.join(' ')}${notes ? ` ${notes}` : ''}`);
    }
  }
  return out.join('\n');
}

/** The order an analyst reads incidents in: unresolved first, then the most severe, then the most recently seen. */
export function rankIncidents<T extends Incident>(incidents: readonly T[]): T[] {
  return [...incidents].sort(
    (a, b) =>
      Number(a.status === 'resolved') - Number(b.status === 'resolved') ||
      SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] ||
      b.lastSeenDay.localeCompare(a.lastSeenDay) ||
      a.id.localeCompare(b.id),
  );
}

function span(incident: Incident): string {
  const days = `${incident.daysSeen} judged day${incident.daysSeen === 1 ? '' : 's'}`;
  return `${incident.since === incident.lastSeenDay ? incident.since : `${incident.since}..${incident.lastSeenDay}`} (${days})`;
}

/**
 * Incidents, numbered in the order given (see `rankIncidents`), the cause
 * first: "#1 data delay · warn ▮▮▯ · 2026-11-30 (1 judged day) · open ·
 * account_signup, monthly_pass", then the cause's sentence, then what was seen.
 */
export function formatIncidents(incidents: readonly ListedIncident[]): string[] {
  if (incidents.length === 0) return ['  none'];
  return incidents.flatMap((incident, index) => {
    const status = `${incident.status}${incident.resolvedDay ? ` ${incident.resolvedDay}` : ''}${incident.muted ? ', muted' : ''}`;
    const head = [causeWords(incident.cause?.label ?? incident.causeLabel), severityLabel(incident.severity), span(incident), status, incident.flows.join(', ')].join(' · ');
    const number = `#${index + 1}`.padEnd(4);
    return [`  ${number}${head}`, `      cause: ${incident.cause?.sentence ?? '-'}`, `      seen:  ${incident.title}`];
  });
}

/**
 * Findings folded to one line per incident, check and platform: how many,
 * the highest severity, on which days. Lines follow the incidents' numbers.
 */
export function foldFindings(findings: readonly LinkedFinding[], incidents: readonly Incident[], maxRanges = 4): string[] {
  const number = new Map(incidents.map((incident, index) => [incident.id, index + 1]));
  const folds = new Map<string, { incident: number | null; check: string; platform: string; findings: LinkedFinding[] }>();
  for (const finding of findings) {
    const incident = finding.incident === null ? null : (number.get(finding.incident) ?? null);
    const platform = finding.platform ?? 'all';
    const key = `${incident ?? ''}|${finding.check}|${platform}`;
    const fold = folds.get(key) ?? { incident, check: finding.check, platform, findings: [] };
    fold.findings.push(finding);
    folds.set(key, fold);
  }
  const ordered = [...folds.values()].sort(
    (a, b) => (a.incident ?? Infinity) - (b.incident ?? Infinity) || a.check.localeCompare(b.check) || a.platform.localeCompare(b.platform),
  );
  return ordered.map(({ incident, check, platform, findings: group }) => {
    const severity = SEVERITY_ORDER.find((level) => group.some((f) => f.severity === level))!;
    const muted = group.filter((f) => f.muted).length;
    const days = dayRanges(
      group.map((f) => f.day),
      maxRanges,
    );
    return `  ${(incident === null ? '-' : `#${incident}`).padEnd(4)}${check.padEnd(11)}${platform.padEnd(9)}${String(group.length).padStart(4)} ${severity.padEnd(5)}${days}${muted > 0 ? ` (${muted} muted)` : ''}`;
  });
}

/** Every finding, grouped by flow, then severity, one line each, with the number of its incident. */
export function formatFindings(findings: readonly LinkedFinding[], incidents: readonly Incident[]): string {
  if (findings.length === 0) return '\nNo findings.';
  const number = new Map(incidents.map((incident, index) => [incident.id, index + 1]));
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
        const ref = f.incident !== null && number.has(f.incident) ? ` #${number.get(f.incident)}` : '';
        out.push(`    ${f.day} ${f.check}${where ? ` [${where}]` : ''} ${f.message}${extras ? ` (${extras})` : ''}${ref}`);
      }
    }
  }
  return out.join('\n');
}
