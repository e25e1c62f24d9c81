/**
 * Rows plumbline could not use as sent, as a share of a platform's rows of
 * the day: from the day status's per-reason counts (service/warehouse/mapping.ts,
 * BAD_ROW_REASONS). Rows without an event name are set aside and so not in
 * `events`; rows of the other reasons were repaired and are in it.
 */
import { dailySeries } from '../series.js';
import type { CheckInput, DayStatusRow } from '../types.js';

/** The reason whose rows are not in the status row's `events`. */
const SET_ASIDE = 'no_event_name';

export interface BadRowShare {
  /** Rows of the day that could not be used as sent. */
  bad: number;
  /** Every row of the day: events plus the rows set aside. */
  rows: number;
  share: number;
  /** Bad rows per reason, the reasons with none left out. */
  reasons: Record<string, number>;
}

/** The bad rows of one platform's status row; undefined when the day has no rows at all. */
export function badRowShare(row: DayStatusRow | undefined): BadRowShare | undefined {
  if (!row) return undefined;
  const reasons = Object.fromEntries(Object.entries(row.badRows ?? {}).filter(([, count]) => count > 0));
  const bad = Object.values(reasons).reduce((a, b) => a + b, 0);
  const rows = row.events + (reasons[SET_ASIDE] ?? 0);
  return rows === 0 ? undefined : { bad, rows, share: bad / rows, reasons };
}

/** The platform's daily share of bad rows (NaN on days without rows), for excerpts. */
export function badRowShares(input: CheckInput, platform: string): Float64Array {
  return dailySeries(
    input.days,
    input.status.filter((row) => row.platform === platform),
    (row) => badRowShare(row)?.share ?? Number.NaN,
  );
}
