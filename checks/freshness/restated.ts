/**
 * Late rows: the daily run re-counts recent past days and rolls up again those
 * whose counts moved; their `DayStatusRow.previousEvents` keeps the count of
 * the rollup before. A restatement is reported once, by the first judged day
 * that saw it.
 */
import type { CheckInput, DayStatusRow } from '../types.js';

export interface Restatement {
  row: DayStatusRow;
  before: number;
  /** Relative change of the day's events, (after - before) / before. */
  change: number;
}

/**
 * Past days of `platform` whose rollup changed by at least `minChange` and
 * that the judged day is the first to see. A past day P counts for the
 * judged day D when it was rolled up again after every day between P and D
 * had been rolled up (so a later day has not seen it yet) and no later than D
 * itself (a restatement made after D's run belongs to a later day). In a
 * daily run the late-row probe rolls P up again just before D, so D reports
 * it and D + 1, rolled up after it, does not. rolledUpAt timestamps all come
 * from the same server clock, so the rule holds in replays too.
 */
export function restatements(input: CheckInput, platform: string, minChange: number): Restatement[] {
  const rows = input.status.filter((row) => row.platform === platform).sort((a, b) => a.day.localeCompare(b.day));
  const judged = rows.find((row) => row.day === input.day);
  const found: Restatement[] = [];
  rows.forEach((row, i) => {
    if (row.day >= input.day || row.previousEvents === null || row.previousEvents === row.events) return;
    const before = row.previousEvents;
    const change = before > 0 ? (row.events - before) / before : Number.POSITIVE_INFINITY;
    if (Math.abs(change) < minChange) return;
    const at = Date.parse(row.rolledUpAt);
    const seenLater = rows.slice(i + 1).some((later) => later.day < input.day && Date.parse(later.rolledUpAt) >= at);
    if (seenLater || (judged !== undefined && at > Date.parse(judged.rolledUpAt))) return;
    found.push({ row, before, change });
  });
  return found;
}
