/**
 * Prediction interval for one new observation from a normal sample.
 *
 * Citation: G. J. Hahn and W. Q. Meeker (1991), "Statistical Intervals: A
 * Guide for Practitioners", Wiley, chapter 4 (the interval to contain a single
 * future observation; cited from memory), the same interval as R's
 * `predict(lm(y ~ 1), newdata, interval = "prediction")`, which the test
 * checks it against.
 *
 * From n past values with mean m and sample standard deviation s, a new value
 * X of the same normal distribution satisfies (X - m) / (s sqrt(1 + 1/n)) ~
 * Student t on n - 1 degrees of freedom, so m +- t(1 - alpha/2; n - 1) s
 * sqrt(1 + 1/n) contains it with probability 1 - alpha. `widening` w
 * generalises the 1: when the new value is a forecast error whose standard
 * deviation is w times that of the past values (an out-of-sample day against
 * in-sample residuals), its variance is s^2 (w^2 + 1/n), the 1/n being the
 * mean's. One-sided: t(1 - alpha; n - 1) on the tested side, the other bound
 * infinite.
 *
 * Complexity: O(n).
 *
 * Example:
 *   predictOne([9.8, 10.2, 10.1, 9.9, 10.0], { alpha: 0.05 })
 *   // { center: 10, critical: 2.7764, scale: 0.1732, low: 9.5191, high: 10.4809, df: 4 } (rounded; R's predict.lm the same)
 */
import type { Alternative } from './generalized-esd.js';
import { tQuantile } from './student-t.js';

export interface PredictOneOptions {
  /** Chance that the new value falls outside the interval when it is like the past ones. */
  alpha: number;
  /** 'two-sided' (default), 'greater' (only a high value is outside) or 'less'. */
  alternative?: Alternative;
  /** Standard deviation of the new value over that of a past value, >= 1 for a forecast error. Default 1. */
  widening?: number;
}

export interface PredictOneResult {
  /** Mean of the past values. */
  center: number;
  /** Sample standard deviation of the past values. */
  sd: number;
  /** Standard deviation of the new value's deviation from the mean: sd sqrt(w^2 + 1/n). */
  scale: number;
  /** Student t quantile the deviation is compared with, in units of `scale`. */
  critical: number;
  /** Degrees of freedom of `sd`: n - 1. */
  df: number;
  low: number;
  high: number;
}

/** The interval meant to hold one new value like `values` (see the file comment). Values must be finite, at least 2. */
export function predictOne(values: ArrayLike<number>, options: PredictOneOptions): PredictOneResult {
  const n = values.length;
  const { alpha, alternative = 'two-sided', widening = 1 } = options;
  if (n < 2) throw new Error(`predictOne needs at least 2 past values for a standard deviation, got ${n}`);
  if (!(alpha > 0 && alpha < 1)) throw new Error(`predictOne alpha must lie strictly between 0 and 1, got ${alpha}`);
  if (!(widening > 0 && Number.isFinite(widening))) throw new Error(`predictOne widening must be a positive number, got ${widening}`);
  let center = 0;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(values[i]!)) throw new Error(`predictOne needs finite values; value ${i} is ${values[i]} (leave missing values out)`);
    center += values[i]!;
  }
  center /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (values[i]! - center) ** 2;
  const sd = Math.sqrt(ss / (n - 1));
  const scale = sd * Math.sqrt(widening * widening + 1 / n);
  const df = n - 1;
  const critical = tQuantile(alternative === 'two-sided' ? 1 - alpha / 2 : 1 - alpha, df);
  return {
    center,
    sd,
    scale,
    critical,
    df,
    low: alternative === 'greater' ? -Infinity : center - critical * scale,
    high: alternative === 'less' ? Infinity : center + critical * scale,
  };
}
