/**
 * How far one platform departed from the others on the judged day, measured
 * against its own usual relation to them.
 *
 * For each platform q and day t, d_q(t) = log value - the median log value of
 * q's baseline days: how far q moved from its own habit. The others' move is
 * the median of d over all platforms measurable that day (the platform itself
 * included): with three platforms a single broken one cannot drag it, and a
 * change on every platform at once (a holiday, a segment in decline across
 * platforms) moves the median with it. The divergence of p is
 * D_p(t) = d_p(t) - median_q d_q(t), and it is judged against its own
 * baseline days by a robust z-score: (D_p(today) - median D_p) /
 * sqrt(scale^2 + se^2), scale = 1.4826 MAD of the baseline D_p (robust.ts),
 * se = the day's sampling error of log value (delta method: sqrt(1/x - 1/n)
 * for a proportion, 1/sqrt(x) for a count).
 *
 * Complexity: O(platforms x days) per metric.
 */
import { median, robustLocationScale } from '../stats/index.js';
import type { Day } from '../types.js';

/** One platform's daily values of one metric, aligned with `CheckInput.days`. */
export interface PlatformSeries {
  platform: string;
  /** log of the day's value, NaN when the day is unknown or below the volume floor. */
  log: Float64Array;
  /** Sampling standard error of `log`, per day. */
  se: Float64Array;
  /** Days left out of this platform's baselines (its anomalous days for this metric, calendar days). */
  excluded: ReadonlySet<Day>;
}

export interface Divergence {
  /** p's move from its own habit today (d_p). */
  own: number;
  /** The median platform's move today. */
  consensus: number;
  /** D_p today minus its baseline median. */
  divergence: number;
  /** Robust z of the divergence. */
  z: number;
  /** sqrt(scale^2 + se^2): the standard deviation the z divides by. */
  sd: number;
  /** Expected log value per day: p's habit moved like the others, plus its usual divergence (NaN when unknown). */
  expectedLog: Float64Array;
  baselineDays: number;
}

/** Fewest usable baseline days for a platform's habit and for its divergence: one week. */
export const MIN_BASELINE_DAYS = 7;

/**
 * The divergence of `target` on the last day, or null when it cannot be
 * judged (no value today, fewer than two platforms, too little baseline).
 * `window` holds the indices of the baseline days.
 */
export function divergence(series: readonly PlatformSeries[], target: string, days: readonly Day[], window: readonly number[]): Divergence | null {
  const today = days.length - 1;
  const moves = series.flatMap((s) => {
    const usable = window.filter((i) => Number.isFinite(s.log[i]!) && !s.excluded.has(days[i]!)).map((i) => s.log[i]!);
    if (usable.length < MIN_BASELINE_DAYS) return [];
    const habit = median(usable);
    return [{ platform: s.platform, series: s, move: s.log.map((value) => value - habit), habit }];
  });
  const mine = moves.find((m) => m.platform === target);
  if (!mine || !Number.isFinite(mine.move[today]!)) return null;

  const consensus = new Float64Array(days.length).fill(Number.NaN);
  for (const i of [...window, today]) {
    const present = moves.map((m) => m.move[i]!).filter(Number.isFinite);
    if (present.length >= 2) consensus[i] = median(present);
  }
  const gap = (i: number) => mine.move[i]! - consensus[i]!;
  const usual = window.filter((i) => Number.isFinite(gap(i)) && !mine.series.excluded.has(days[i]!)).map(gap);
  if (usual.length < MIN_BASELINE_DAYS || !Number.isFinite(consensus[today]!)) return null;
  const { center, scale } = robustLocationScale(usual);
  const sd = Math.sqrt(scale * scale + mine.series.se[today]! ** 2);
  const divergenceToday = gap(today) - center;
  const expectedLog = new Float64Array(days.length).fill(Number.NaN);
  for (const i of [...window, today]) expectedLog[i] = mine.habit + consensus[i]! + center;
  return {
    own: mine.move[today]!,
    consensus: consensus[today]!,
    divergence: divergenceToday,
    z: sd > 0 ? divergenceToday / sd : 0,
    sd,
    expectedLog,
    baselineDays: usual.length,
  };
}
