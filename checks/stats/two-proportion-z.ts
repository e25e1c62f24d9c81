/**
 * Two-proportion z-test (pooled), without continuity correction.
 *
 * Citation: J. L. Fleiss, B. Levin and M. C. Paik (2003), "Statistical Methods
 * for Rates and Proportions", 3rd ed., Wiley, section 2.5 (its square is the
 * Pearson chi-square of the 2x2 table; R: `prop.test(..., correct = FALSE)`).
 *
 * z = (p1 - p2) / sqrt(p (1 - p) (1/n1 + 1/n2)), p = (x1 + x2) / (n1 + n2);
 * p-value from the standard normal. When p is 0 or 1 both samples are identical
 * and there is no evidence of a difference: z = 0, p-value 1.
 *
 * Complexity: O(1).
 *
 * Example:
 *   twoProportionZ(56, 70, 48, 80) // { z: 2.6502, pValue: 0.0080 } (rounded; R prop.test(correct = FALSE) gives X-squared = z^2 = 7.0234)
 */
import normalCdf from '@stdlib/stats-base-dists-normal-cdf';
import type { Alternative } from './generalized-esd.js';
import { checkCount } from './wilson.js';

export interface ZTestResult {
  z: number;
  pValue: number;
}

/**
 * alternative: 'two-sided' (default), 'greater' (p1 > p2) or 'less' (p1 < p2).
 */
export function twoProportionZ(x1: number, n1: number, x2: number, n2: number, alternative: Alternative = 'two-sided'): ZTestResult {
  checkCount(x1, n1, 'twoProportionZ (group 1)');
  checkCount(x2, n2, 'twoProportionZ (group 2)');
  const pooled = (x1 + x2) / (n1 + n2);
  const se = Math.sqrt(pooled * (1 - pooled) * (1 / n1 + 1 / n2));
  if (se === 0) return { z: 0, pValue: 1 };
  const z = (x1 / n1 - x2 / n2) / se;
  const upper = 1 - normalCdf(z, 0, 1);
  const lower = normalCdf(z, 0, 1);
  const pValue = alternative === 'greater' ? upper : alternative === 'less' ? lower : Math.min(1, 2 * Math.min(upper, lower));
  return { z, pValue };
}
