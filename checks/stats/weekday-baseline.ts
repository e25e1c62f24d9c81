/**
 * Short-history baseline: the median of the same weekday over the last k weeks.
 *
 * Citation: common practice (a seasonal-naive forecast made robust with the
 * median; R. J. Hyndman and G. Athanasopoulos (2021), "Forecasting: Principles
 * and Practice", 3rd ed., OTexts, section 5.2, for the seasonal naive method).
 * plumbline uses it until a series has enough history for STL (see
 * `seasonal-detector.ts` for the switch point), because it needs only a couple
 * of weeks and one odd week cannot move a median of several.
 *
 * Missing days (NaN) and excluded days (weight 0) are skipped, not counted as
 * zero; a zero is a real observation and is used like any other value.
 *
 * Complexity: O(k) per point.
 *
 * Example:
 *   // Mondays at indices 0, 7, 14, 21 were 10, 12, 11, 30; judge index 28:
 *   weekdayBaseline(series, 28, { weeks: 4 }) // { expected: 11.5, used: 4 }
 */

export interface WeekdayBaselineOptions {
  /** Observations per cycle. Default 7 (daily data). */
  period?: number;
  /** k: how many previous cycles to look back. Default 4. */
  weeks?: number;
  /** Per-point weights; 0 leaves a day out (e.g. a day already judged anomalous). */
  userWeights?: ArrayLike<number>;
}

export interface WeekdayBaseline {
  /** Median of the usable same-weekday values, NaN when there are none. */
  expected: number;
  /** How many values the median was taken over. */
  used: number;
}

export function weekdayBaseline(values: ArrayLike<number>, index: number, options: WeekdayBaselineOptions = {}): WeekdayBaseline {
  const { period = 7, weeks = 4, userWeights } = options;
  if (!Number.isInteger(period) || period < 1) throw new Error(`weekdayBaseline period must be a whole number >= 1, got ${period}`);
  if (!Number.isInteger(weeks) || weeks < 1) throw new Error(`weekdayBaseline weeks must be a whole number >= 1, got ${weeks}`);
  if (!Number.isInteger(index) || index < 0 || index >= values.length) {
    throw new Error(`weekdayBaseline index must be a position in the series (0..${values.length - 1}), got ${index}`);
  }
  if (userWeights !== undefined && userWeights.length !== values.length) {
    throw new Error(`weekdayBaseline userWeights must have one entry per value (${values.length}), got ${userWeights.length}`);
  }
  // Called for every day of every series a check judges: the picks go to a reused buffer, sorted by insertion (k is small).
  if (scratch.length < weeks) scratch = new Float64Array(Math.max(weeks, 2 * scratch.length));
  let used = 0;
  for (let j = 1; j <= weeks; j++) {
    const t = index - j * period;
    if (t < 0) break;
    const v = values[t]!;
    if (Number.isNaN(v) || (userWeights !== undefined && !(userWeights[t]! > 0))) continue;
    let k = used++;
    while (k > 0 && scratch[k - 1]! > v) {
      scratch[k] = scratch[k - 1]!;
      k--;
    }
    scratch[k] = v;
  }
  if (used === 0) return { expected: Number.NaN, used: 0 };
  const mid = used >> 1;
  const expected = used % 2 === 1 ? scratch[mid]! : (scratch[mid - 1]! + scratch[mid]!) / 2;
  return { expected, used };
}

let scratch = new Float64Array(16);
