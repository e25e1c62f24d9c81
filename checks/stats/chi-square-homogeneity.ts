/**
 * Pearson chi-square test of homogeneity of k proportions (a 2 x k table).
 *
 * Citation: K. Pearson (1900), "On the criterion that a given system of
 * deviations from the probable...", Philosophical Magazine 50(302):157-175;
 * worked example in the NIST/SEMATECH e-Handbook of Statistical Methods,
 * section 7.4.6 ("Comparing multiple proportions: the chi-square test").
 *
 * Groups j = 1..k with x_j successes out of n_j: pooled p = sum x / sum n;
 * statistic = sum over both rows of (observed - expected)^2 / expected with
 * expected n_j p and n_j (1 - p); k - 1 degrees of freedom. The approximation
 * wants expected counts of about 5 or more (W. G. Cochran 1954, "Some methods
 * for strengthening the common chi-square tests", Biometrics 10:417-451):
 * `minExpected` is returned so callers can decline to judge sparse tables.
 *
 * Complexity: O(k).
 *
 * Example:
 *   chiSquareHomogeneity([36, 46, 42, 63, 38], [300, 300, 300, 300, 300])
 *   // { statistic: 12.1307, df: 4, pValue: 0.0164, minExpected: 45 } (rounded; NIST 7.4.6)
 */
import chiSquareCdf from '@stdlib/stats-base-dists-chisquare-cdf';
import { checkCount } from './wilson.js';

export interface ChiSquareResult {
  statistic: number;
  df: number;
  pValue: number;
  /** Smallest expected cell count (see the file comment). */
  minExpected: number;
}

export function chiSquareHomogeneity(counts: readonly number[], totals: readonly number[]): ChiSquareResult {
  const k = counts.length;
  if (k < 2) throw new Error(`chi-square homogeneity needs at least 2 groups, got ${k}`);
  if (totals.length !== k) throw new Error(`chi-square homogeneity needs one total per count: ${k} counts, ${totals.length} totals`);
  let x = 0;
  let n = 0;
  for (let j = 0; j < k; j++) {
    checkCount(counts[j]!, totals[j]!, `chi-square homogeneity (group ${j})`);
    x += counts[j]!;
    n += totals[j]!;
  }
  const p = x / n;
  const df = k - 1;
  if (p === 0 || p === 1) {
    // Every group is all failures or all successes: identical, nothing to test.
    return { statistic: 0, df, pValue: 1, minExpected: 0 };
  }
  let statistic = 0;
  let minExpected = Infinity;
  for (let j = 0; j < k; j++) {
    const e1 = totals[j]! * p;
    const e0 = totals[j]! * (1 - p);
    const o1 = counts[j]!;
    const o0 = totals[j]! - o1;
    statistic += (o1 - e1) ** 2 / e1 + (o0 - e0) ** 2 / e0;
    minExpected = Math.min(minExpected, e1, e0);
  }
  return { statistic, df, pValue: 1 - chiSquareCdf(statistic, df), minExpected };
}
