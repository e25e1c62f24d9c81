/**
 * The day-of-week expectation behind `volume` (and freshness's duplicate test):
 * each day is expected at the median of the same weekday over the last four
 * weeks (`weekdayBaseline` in checks/stats), and a day is scored by how far its
 * log ratio to that expectation sits from zero in units of the series' own
 * day-to-day spread of that log ratio.
 *
 * Why the weekday median rather than the seasonal detector: volume is judged
 * against a practical threshold (a drop of more than `max_drop` below
 * expectation), which needs a level that follows recent weeks and stays put
 * while an incident lasts. The detector's ESD stops flagging a run of
 * anomalies longer than a tenth of its window; the weekday median looks
 * further back instead (up to `MAX_WEEKS`) when the recent weeks were left out,
 * so a three-week tracking loss keeps being measured against the weeks before
 * it.
 */
import { robustLocationScale, weekdayBaseline } from '../stats/index.js';

/** Weeks the median looks back first (common practice: the seasonal naive forecast over four cycles). */
const WEEKS = 4;
/** Fewest same-weekday values the median should rest on before it looks further back. */
const WANTED = 3;
/** How far back the median may look when recent weeks were left out (anomalous or calendar days). */
const MAX_WEEKS = 16;
/** Fewest same-weekday values an expectation may rest on at all (as the seasonal detector's weekday method). */
const MIN_SAME_WEEKDAY = 2;
/** History days whose log ratios give the spread (eight weeks). */
const SPREAD_DAYS = 56;
/** Fewest history log ratios for a spread (one week, as the seasonal detector). */
const MIN_SPREAD_DAYS = 7;

/** Expected value of day `index` from earlier same weekdays (NaN when fewer than two usable); `segments` uses it too. */
export function weekdayExpectation(values: Float64Array, index: number): { expected: number; used: number } {
  let weeks = WEEKS;
  let result = weekdayBaseline(values, index, { weeks });
  while (result.used < WANTED && weeks < MAX_WEEKS && index - weeks * 7 > 0) {
    weeks += WEEKS;
    result = weekdayBaseline(values, index, { weeks });
  }
  return result.used >= MIN_SAME_WEEKDAY ? result : { expected: Number.NaN, used: result.used };
}

/**
 * Log ratio of a value to its expectation. Counts pass `offset` 1 so a zero
 * stays finite; rates that cannot be 0 (events per person) pass 0.
 */
export function logRatio(value: number, expected: number, offset: number): number {
  return Math.log((value + offset) / (expected + offset));
}

export interface Expectation {
  /** Expected value of the last `SPREAD_DAYS` + 1 days of the series (NaN before them and where history is too short). */
  expected: Float64Array;
  /** Same-weekday values behind the last day's expectation. */
  used: number;
  /** Robust spread (1.4826 MAD) of the history log ratios, before any floor; NaN with fewer than a week of them. */
  spread: number;
  /** History log ratios the spread was taken over. */
  spreadDays: number;
}

/**
 * Expectations of every day of `values` and the spread of the history's log
 * ratios. `values` must already hold NaN on days to leave out (missing,
 * anomalous and calendar days, see `withoutDays`) except the last, the judged
 * day: a left-out day neither serves as anyone's baseline nor adds to the
 * spread.
 */
export function expectation(values: Float64Array, offset: number): Expectation {
  const n = values.length;
  const expected = new Float64Array(n).fill(Number.NaN);
  const ratios: number[] = [];
  let used = 0;
  for (let i = Math.max(0, n - 1 - SPREAD_DAYS); i < n; i++) {
    const own = weekdayExpectation(values, i);
    expected[i] = own.expected;
    if (i === n - 1) used = own.used;
    else if (i >= n - 1 - SPREAD_DAYS && Number.isFinite(own.expected) && !Number.isNaN(values[i]!)) {
      ratios.push(logRatio(values[i]!, own.expected, offset));
    }
  }
  const spread = ratios.length >= MIN_SPREAD_DAYS ? robustLocationScale(ratios).scale : Number.NaN;
  return { expected, used, spread, spreadDays: ratios.length };
}
