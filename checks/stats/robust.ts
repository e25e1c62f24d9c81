/**
 * Robust location and scale: the median and the median absolute deviation (MAD)
 * scaled by 1.4826 so that it estimates the standard deviation of normal data.
 *
 * Citation: F. R. Hampel (1974), "The Influence Curve and its Role in Robust
 * Estimation", JASA 69(346):383-393 (the MAD and its 1.4826 = 1/Phi^-1(3/4)
 * consistency factor); P. J. Rousseeuw and C. Croux (1993), "Alternatives to the
 * Median Absolute Deviation", JASA 88(424):1273-1283. R's `mad()` uses the same
 * constant. Selection by C. A. R. Hoare (1961), "Algorithm 65: FIND", CACM 4(7).
 *
 * Complexity: O(n) expected time (selection, not sorting); `median` and `mad`
 * copy their input, the `...InPlace` variants reorder a caller's buffer instead.
 *
 * Zero MAD: when more than half the values are tied the MAD is 0 although the
 * values are not all equal (e.g. mostly-zero daily counts). `robustLocationScale`
 * then falls back to the mean absolute deviation from the median times
 * sqrt(pi/2) = 1.2533 (also consistent for sigma under normality), the usual
 * fallback of the modified z-score (common practice), and reports 0 only for
 * values that are all equal.
 *
 * Example:
 *   median([1, 2, 3, 4, 100]) // 3
 *   mad([1, 2, 3, 4, 100])    // 1.4826 (median of |x - 3| = [2, 1, 0, 1, 97] is 1)
 */
import { median as ssMedian, medianAbsoluteDeviation as ssMad } from 'simple-statistics';

/** 1 / Phi^-1(3/4): makes the MAD a consistent estimator of sigma under normality. */
export const MAD_SCALE = 1.4826;

function checkFinite(values: ArrayLike<number>, what: string): number[] {
  if (values.length === 0) throw new Error(`${what} needs at least one value`);
  const out = new Array<number>(values.length);
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    if (!Number.isFinite(v)) throw new Error(`${what} needs finite values; value ${i} is ${v} (drop missing values first)`);
    out[i] = v;
  }
  return out;
}

/** Median of the values (average of the two middle ones for an even count). */
export function median(values: ArrayLike<number>): number {
  return ssMedian(checkFinite(values, 'median'));
}

/**
 * Scaled median absolute deviation: 1.4826 * median(|x - center|), with center
 * the median unless given. 0 for a constant series: callers must handle a zero
 * scale (see `hybrid-esd.ts`).
 */
export function mad(values: ArrayLike<number>, center?: number): number {
  const x = checkFinite(values, 'mad');
  if (center === undefined) return MAD_SCALE * ssMad(x);
  if (!Number.isFinite(center)) throw new Error(`mad center must be finite, got ${center}`);
  return MAD_SCALE * ssMedian(x.map((v) => Math.abs(v - center)));
}

/**
 * Puts the k-th smallest of a[lo..hi] at index k, smaller-or-equal values before
 * it and larger-or-equal after (Hoare's FIND with a median-of-three pivot).
 */
export function selectInPlace(a: Float64Array, lo: number, hi: number, k: number): void {
  while (hi > lo) {
    const mid = (lo + hi) >> 1;
    // Median of three guards against the quadratic case on sorted input.
    if (a[mid]! < a[lo]!) swap(a, mid, lo);
    if (a[hi]! < a[lo]!) swap(a, hi, lo);
    if (a[hi]! < a[mid]!) swap(a, hi, mid);
    const pivot = a[mid]!;
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i]! < pivot) i++;
      while (a[j]! > pivot) j--;
      if (i <= j) {
        swap(a, i, j);
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return;
  }
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i]!;
  a[i] = a[j]!;
  a[j] = t;
}

/** Median of a[0..n-1], n >= 1, reordering a. No validation: for hot loops over finite data. */
export function medianInPlace(a: Float64Array, n: number): number {
  const upper = n >> 1;
  selectInPlace(a, 0, n - 1, upper);
  const hi = a[upper]!;
  if (n % 2 === 1) return hi;
  // After selection the lower middle value is the largest of the left part.
  let lo = a[0]!;
  for (let i = 1; i < upper; i++) if (a[i]! > lo) lo = a[i]!;
  return (lo + hi) / 2;
}

/** sqrt(pi/2): makes the mean absolute deviation a consistent estimator of sigma under normality. */
const MEAN_AD_SCALE = Math.sqrt(Math.PI / 2);

/**
 * Median and robust scale of a[0..n-1] (n >= 1), reordering a: 1.4826 MAD, or
 * 1.2533 times the mean absolute deviation when the MAD is 0; scale 0 only when
 * all values are equal. No validation: for finite data.
 */
export function robustLocationScaleInPlace(a: Float64Array, n: number): { center: number; scale: number } {
  const center = medianInPlace(a, n);
  let meanAbs = 0;
  for (let i = 0; i < n; i++) {
    const d = Math.abs(a[i]! - center);
    a[i] = d;
    meanAbs += d;
  }
  const mad = MAD_SCALE * medianInPlace(a, n);
  return { center, scale: mad > 0 ? mad : MEAN_AD_SCALE * (meanAbs / n) };
}

/** Median and robust scale (see robustLocationScaleInPlace) of finite values. */
export function robustLocationScale(values: ArrayLike<number>): { center: number; scale: number } {
  const x = checkFinite(values, 'robustLocationScale');
  return robustLocationScaleInPlace(Float64Array.from(x), x.length);
}

/**
 * Median of a[0..n-1] (n >= 1) given a guess close to it (e.g. the previous
 * pass's median in an iteration): one pass counts the values below guess * 0.9
 * and gathers those within 10% of the guess into `scratch`; if both middle
 * order statistics fall among the gathered ones, only those are selected from
 * (a few dozen instead of n). Otherwise, or without a positive guess, it is
 * medianInPlace. Same result either way; a is left unchanged on the fast path.
 */
export function medianNear(a: Float64Array, n: number, guess: number, scratch: Float64Array): number {
  if (guess > 0) {
    const lo = 0.9 * guess;
    const hi = 1.1 * guess;
    let below = 0;
    let m = 0;
    for (let i = 0; i < n; i++) {
      // Branch-free: the comparisons are unpredictable, so always store and advance conditionally.
      const v = a[i]!;
      below += v < lo ? 1 : 0;
      scratch[m] = v;
      m += v >= lo && v <= hi ? 1 : 0;
    }
    const upper = n >> 1;
    const lower = (n - 1) >> 1;
    if (lower >= below && upper < below + m) {
      selectInPlace(scratch, 0, m - 1, upper - below);
      const hiValue = scratch[upper - below]!;
      if (lower === upper) return hiValue;
      let loValue = scratch[0]!;
      for (let i = 1; i <= lower - below; i++) if (scratch[i]! > loValue) loValue = scratch[i]!;
      return (loValue + hiValue) / 2;
    }
  }
  return medianInPlace(a, n);
}
