/**
 * Comparison of two Poisson rates, conditional on their total.
 *
 * Citation: W. Przyborowski and H. Wilenski (1940), "Homogeneity of results in
 * testing samples from Poisson series", Biometrika 31(3/4):313-323 (cited from
 * memory): given x1 events over exposure e1 and x2 over e2, under equal rates
 * x1 given x1 + x2 is binomial with p0 = e1 / (e1 + e2). We use the score
 * statistic of that binomial, z = (x1 - n p0) / sqrt(n p0 (1 - p0)) with
 * n = x1 + x2; its square equals R's `prop.test(x1, n, p = p0, correct = FALSE)`.
 * Used where a count may exceed its exposure (events per person, people
 * sending an event per person entering the flow), so a two-proportion test
 * does not apply.
 *
 * Complexity: O(1).
 *
 * Example:
 *   rateComparison(30, 1, 70, 1) // { z: -4, pValue: 6.33e-5, ratio: 0.4286 } (R: prop.test(30, 100, p = 0.5, correct = FALSE))
 */
import normalCdf from '@stdlib/stats-base-dists-normal-cdf';
import type { Alternative } from './generalized-esd.js';

export interface RateComparison {
  /** Score statistic: negative when rate 1 is below rate 2. */
  z: number;
  pValue: number;
  /** (x1 / e1) / (x2 / e2); NaN when rate 2 is 0. */
  ratio: number;
}

export function rateComparison(x1: number, e1: number, x2: number, e2: number, alternative: Alternative = 'two-sided'): RateComparison {
  for (const [name, value] of [['x1', x1], ['x2', x2]] as const) {
    if (!(value >= 0 && Number.isFinite(value))) throw new Error(`rateComparison needs non-negative counts, got ${name} = ${value}`);
  }
  if (!(e1 > 0 && e2 > 0)) throw new Error(`rateComparison needs positive exposures, got e1 = ${e1}, e2 = ${e2}`);
  const n = x1 + x2;
  const ratio = x2 > 0 ? x1 / e1 / (x2 / e2) : Number.NaN;
  if (n === 0) return { z: 0, pValue: 1, ratio };
  const p0 = e1 / (e1 + e2);
  const z = (x1 - n * p0) / Math.sqrt(n * p0 * (1 - p0));
  const upper = 1 - normalCdf(z, 0, 1);
  const lower = normalCdf(z, 0, 1);
  const pValue = alternative === 'greater' ? upper : alternative === 'less' ? lower : Math.min(1, 2 * Math.min(upper, lower));
  return { z, pValue, ratio };
}
