/**
 * Grubbs' test for one outlier (the maximum normed residual test).
 *
 * Citation: F. E. Grubbs (1950), "Sample Criteria for Testing Outlying
 * Observations", Annals of Mathematical Statistics 21(1):27-58; F. E. Grubbs
 * (1969), "Procedures for Detecting Outlying Observations in Samples",
 * Technometrics 11(1):1-21; formulas and worked example in the NIST/SEMATECH
 * e-Handbook of Statistical Methods, section 1.3.5.17.1.
 *
 * G = max |Y_i - mean| / s (two-sided), (Y_max - mean) / s ('greater') or
 * (mean - Y_min) / s ('less'), s the sample standard deviation. Critical value
 * ((N-1)/sqrt(N)) sqrt(t^2 / (N-2+t^2)) with t the upper alpha/(2N) (two-sided)
 * or alpha/N (one-sided) quantile of Student's t on N-2 degrees of freedom.
 * Assumes the rest of the data are normal; for several outliers use the
 * generalized ESD test (`generalized-esd.ts`).
 *
 * Complexity: O(n) time, O(1) extra memory.
 *
 * Example:
 *   grubbs([199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57], { alternative: 'greater' })
 *   // { statistic: 2.4688, critical: 2.0317, outlier: true, index: 7, ... } (rounded; NIST prints 2.4687 and 2.032, truncated)
 */
import type { Alternative } from './generalized-esd.js';
import { tQuantile } from './student-t.js';

export interface GrubbsOptions {
  /** Significance level. Default 0.05. */
  alpha?: number;
  /** 'two-sided' (default), 'greater' (test the maximum) or 'less' (test the minimum). */
  alternative?: Alternative;
}

export interface GrubbsResult {
  statistic: number;
  critical: number;
  /** Whether the statistic exceeds the critical value. */
  outlier: boolean;
  /** Index of the value tested (the most extreme in the tested direction). */
  index: number;
  value: number;
  mean: number;
  sd: number;
}

export function grubbs(values: ArrayLike<number>, options: GrubbsOptions = {}): GrubbsResult {
  const { alpha = 0.05, alternative = 'two-sided' } = options;
  const n = values.length;
  if (n < 3) throw new Error(`Grubbs' test needs at least 3 values, got ${n}`);
  if (!(alpha > 0 && alpha < 1)) throw new Error(`Grubbs' test alpha must lie strictly between 0 and 1, got ${alpha}`);
  let mean = 0;
  for (let i = 0; i < n; i++) {
    const v = values[i]!;
    if (!Number.isFinite(v)) throw new Error(`Grubbs' test needs finite values; value ${i} is ${v}`);
    mean += v;
  }
  mean /= n;
  let ss = 0;
  let index = 0;
  let best = -Infinity;
  for (let i = 0; i < n; i++) {
    const d = values[i]! - mean;
    ss += d * d;
    const dev = alternative === 'two-sided' ? Math.abs(d) : alternative === 'greater' ? d : -d;
    if (dev > best) {
      best = dev;
      index = i;
    }
  }
  const sd = Math.sqrt(ss / (n - 1));
  if (sd === 0) throw new Error("Grubbs' test needs values that are not all equal (standard deviation 0)");
  const statistic = best / sd;
  const tail = alternative === 'two-sided' ? alpha / (2 * n) : alpha / n;
  const t = tQuantile(1 - tail, n - 2);
  const critical = ((n - 1) / Math.sqrt(n)) * Math.sqrt((t * t) / (n - 2 + t * t));
  return { statistic, critical, outlier: statistic > critical, index, value: values[index]!, mean, sd };
}
