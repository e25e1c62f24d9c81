/**
 * Student's t distribution: quantile and cumulative distribution function.
 *
 * Citation: "Student" (W. S. Gosset, 1908), "The Probable Error of a Mean",
 * Biometrika 6(1):1-25. Computed by the stdlib project's implementations
 * (@stdlib/stats-base-dists-t-quantile and -t-cdf, via the regularized incomplete
 * beta function and its inverse); test/stats/student-t.test.ts checks them
 * against R's `qt` and `pt` in the tails the outlier tests use.
 *
 * Complexity: O(1) per call (a bounded number of iterations).
 *
 * Example:
 *   tQuantile(0.975, 10) // 2.2281388519862739 (R: qt(0.975, 10) prints the same)
 *   tCdf(2.5, 5)          // 0.97275495032881 (R: pt(2.5, 5))
 */
import tCdfImpl from '@stdlib/stats-base-dists-t-cdf';
import tQuantileImpl from '@stdlib/stats-base-dists-t-quantile';

function checkDf(df: number, what: string): void {
  if (!(df > 0) || !Number.isFinite(df)) throw new Error(`${what} needs degrees of freedom > 0, got ${df}`);
}

/** The p-quantile of Student's t with df degrees of freedom. */
export function tQuantile(p: number, df: number): number {
  checkDf(df, 'tQuantile');
  if (!(p > 0 && p < 1)) throw new Error(`tQuantile needs a probability strictly between 0 and 1, got ${p}`);
  return tQuantileImpl(p, df);
}

/** P(T <= t) for Student's t with df degrees of freedom. */
export function tCdf(t: number, df: number): number {
  checkDf(df, 'tCdf');
  if (Number.isNaN(t)) throw new Error('tCdf needs a number, got NaN');
  return tCdfImpl(t, df);
}
