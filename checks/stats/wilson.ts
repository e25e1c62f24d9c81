/**
 * Wilson score interval for a binomial proportion.
 *
 * Citation: E. B. Wilson (1927), "Probable Inference, the Law of Succession, and
 * Statistical Inference", JASA 22(158):209-212; recommended and tabulated in
 * R. G. Newcombe (1998), "Two-sided confidence intervals for the single
 * proportion: comparison of seven methods", Statistics in Medicine 17:857-872
 * (method 3, without continuity correction).
 *
 * center = (x + z^2/2) / (n + z^2); half-width = z / (n + z^2) *
 * sqrt(x (n - x) / n + z^2 / 4), z the standard normal quantile at
 * 1 - (1 - confidence) / 2. Stays inside [0, 1] and is sensible at x = 0 or n,
 * unlike the Wald interval.
 *
 * Complexity: O(1).
 *
 * Example:
 *   wilson(81, 263) // { low: 0.2553, high: 0.3662, center: 0.3107 } (rounded; Newcombe 1998)
 */
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';

export interface ProportionInterval {
  low: number;
  high: number;
  /** Midpoint of the interval (the Wilson centre, shrunk towards 1/2), not the observed proportion. */
  center: number;
}

/** z quantile for a two-sided interval of the given confidence. */
export function zForConfidence(confidence: number): number {
  if (!(confidence > 0 && confidence < 1)) throw new Error(`confidence must lie strictly between 0 and 1, got ${confidence}`);
  return normalQuantile(1 - (1 - confidence) / 2, 0, 1);
}

export function checkCount(successes: number, n: number, what: string): void {
  if (!Number.isInteger(n) || n < 1) throw new Error(`${what} needs a whole number of trials >= 1, got n = ${n}`);
  if (!Number.isInteger(successes) || successes < 0 || successes > n) {
    throw new Error(`${what} needs a whole number of successes from 0 to n = ${n}, got ${successes}`);
  }
}

export function wilson(successes: number, n: number, confidence = 0.95): ProportionInterval {
  checkCount(successes, n, 'wilson');
  const z = zForConfidence(confidence);
  const z2 = z * z;
  const center = (successes + z2 / 2) / (n + z2);
  const half = (z / (n + z2)) * Math.sqrt((successes * (n - successes)) / n + z2 / 4);
  // Clamp the ends that are exactly 0 or 1 in theory but may round past them.
  return { low: successes === 0 ? 0 : center - half, high: successes === n ? 1 : center + half, center };
}
