/**
 * Generalized extreme Studentized deviate (ESD) test for up to r outliers.
 *
 * Citation: B. Rosner (1983), "Percentage Points for a Generalized ESD
 * Many-Outlier Procedure", Technometrics 25(2):165-172; worked example in the
 * NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.5.17.3. The robust
 * variant (median and MAD in place of mean and standard deviation) is the one of
 * J. Hochenbaum, O. S. Vallis and A. Kejariwal (2017), "Automatic Anomaly
 * Detection in the Cloud Via Statistical Learning", arXiv:1704.07706.
 *
 * Step i = 1..r: R_i = max |x - center| / scale over the values not yet removed,
 * remove that value; lambda_i = (n-i) t / sqrt((n-i-1+t^2)(n-i+1)) with t the
 * Student-t quantile at 1 - alpha/(2(n-i+1)) (two-sided; 1 - alpha/(n-i+1)
 * one-sided) on n-i-1 degrees of freedom. The number of outliers is the largest
 * i with R_i > lambda_i.
 * Zero scale: when the remaining values are all equal the steps stop (nothing
 * deviates). When the MAD is 0 but not all values are equal (more than half
 * tied, e.g. mostly-zero counts) the robust scale falls back to 1.2533 times the
 * mean absolute deviation (see `robust.ts`), so the values that differ are
 * scored instead of being infinitely far away.
 *
 * Complexity: O(r n) time (selection for the median and MAD at each step),
 * O(n) memory.
 *
 * Example:
 *   generalizedEsd([1, 2, 3, 2, 1, 2, 50], { maxOutliers: 2 }).outliers // [6]
 */
import { robustLocationScaleInPlace } from './robust.js';
import { tQuantile } from './student-t.js';

export type Alternative = 'two-sided' | 'greater' | 'less';

export interface GeneralizedEsdOptions {
  /** r: the largest number of outliers to test for; at most n - 2. */
  maxOutliers: number;
  /** Significance level. Default 0.05. */
  alpha?: number;
  /** 'two-sided' (default), 'greater' (only high values) or 'less' (only low values). */
  alternative?: Alternative;
  /** Median and scaled MAD instead of mean and sample standard deviation. Default false. */
  robust?: boolean;
}

export interface EsdStep {
  /** Step number i, from 1. */
  step: number;
  /** Index in the input of the value removed at this step. */
  index: number;
  value: number;
  /** R_i. */
  statistic: number;
  /** lambda_i. */
  critical: number;
  /** Location and scale the statistic was computed with. */
  center: number;
  scale: number;
}

export interface GeneralizedEsdResult {
  steps: EsdStep[];
  /** Number of outliers: the largest i with R_i > lambda_i (0 if none). */
  outlierCount: number;
  /** Input indices of the outliers, in the order they were removed. */
  outliers: number[];
}

/** lambda_i of Rosner (1983) for a sample of n, step i (1-based). */
export function esdCriticalValue(n: number, step: number, alpha: number, alternative: Alternative = 'two-sided'): number {
  if (!Number.isInteger(n) || !Number.isInteger(step) || step < 1 || n - step - 1 < 1) {
    throw new Error(`ESD critical value needs whole numbers with n - step - 1 >= 1, got n = ${n}, step = ${step}`);
  }
  if (!(alpha > 0 && alpha < 1)) throw new Error(`ESD alpha must lie strictly between 0 and 1, got ${alpha}`);
  const remaining = n - step + 1;
  const p = alternative === 'two-sided' ? 1 - alpha / (2 * remaining) : 1 - alpha / remaining;
  const df = n - step - 1;
  const t = tQuantile(p, df);
  return ((n - step) * t) / Math.sqrt((df + t * t) * remaining);
}

/** Location and scale of the values whose mask is 0, into out[0..1]; returns false when the values are all equal. */
function locationScale(x: Float64Array, removed: Uint8Array, robust: boolean, scratch: Float64Array, out: Float64Array): boolean {
  const n = x.length;
  let m = 0;
  for (let i = 0; i < n; i++) if (removed[i] === 0) scratch[m++] = x[i]!;
  if (robust) {
    const { center, scale } = robustLocationScaleInPlace(scratch, m);
    out[0] = center;
    out[1] = scale;
    return scale > 0;
  }
  let mean = 0;
  for (let i = 0; i < m; i++) mean += scratch[i]!;
  mean /= m;
  let ss = 0;
  for (let i = 0; i < m; i++) ss += (scratch[i]! - mean) ** 2;
  out[0] = mean;
  out[1] = Math.sqrt(ss / (m - 1));
  return out[1] > 0;
}

/** Generalized ESD test; see the file comment. Values must be finite (leave missing values out). */
export function generalizedEsd(values: ArrayLike<number>, options: GeneralizedEsdOptions): GeneralizedEsdResult {
  const n = values.length;
  const { maxOutliers, alpha = 0.05, alternative = 'two-sided', robust = false } = options;
  if (n < 3) throw new Error(`generalized ESD needs at least 3 values, got ${n}`);
  if (!Number.isInteger(maxOutliers) || maxOutliers < 1 || maxOutliers > n - 2) {
    throw new Error(`generalized ESD maxOutliers must be a whole number from 1 to n - 2 = ${n - 2}, got ${maxOutliers}`);
  }
  if (alternative !== 'two-sided' && alternative !== 'greater' && alternative !== 'less') {
    throw new Error(`generalized ESD alternative must be 'two-sided', 'greater' or 'less', got ${String(alternative)}`);
  }
  const x = Float64Array.from(values);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(x[i]!)) throw new Error(`generalized ESD needs finite values; value ${i} is ${x[i]} (leave missing values out)`);
  }
  const removed = new Uint8Array(n);
  const scratch = new Float64Array(n);
  const ls = new Float64Array(2);
  const steps: EsdStep[] = [];
  let outlierCount = 0;
  for (let step = 1; step <= maxOutliers; step++) {
    if (!locationScale(x, removed, robust, scratch, ls)) break;
    const center = ls[0]!;
    const scale = ls[1]!;
    let best = -1;
    let bestDev = -1;
    for (let i = 0; i < n; i++) {
      if (removed[i] === 1) continue;
      const d = x[i]! - center;
      const dev = alternative === 'two-sided' ? Math.abs(d) : alternative === 'greater' ? d : -d;
      if (dev > bestDev) {
        bestDev = dev;
        best = i;
      }
    }
    const statistic = bestDev / scale;
    const critical = esdCriticalValue(n, step, alpha, alternative);
    removed[best] = 1;
    steps.push({ step, index: best, value: x[best]!, statistic, critical, center, scale });
    if (statistic > critical) outlierCount = step;
  }
  return { steps, outlierCount, outliers: steps.slice(0, outlierCount).map((s) => s.index) };
}
