/**
 * Seasonal hybrid ESD (S-H-ESD): anomalies in a seasonal series.
 *
 * Citation: J. Hochenbaum, O. S. Vallis and A. Kejariwal (2017), "Automatic
 * Anomaly Detection in the Cloud Via Statistical Learning", arXiv:1704.07706.
 *
 * The seasonal component S comes from a robust STL decomposition with a periodic
 * seasonal (`stl.ts`, Cleveland et al. 1990); the residual is R = X - S -
 * median(X) (the paper uses the median rather than the STL trend, which could
 * absorb anomalies); the generalized ESD test (`generalized-esd.ts`, Rosner 1983)
 * with median and MAD in place of mean and standard deviation then finds at most
 * k n anomalies (k <= 0.49).
 *
 * Missing days (NaN) are left out of the decomposition fits and of the test;
 * days with userWeights 0 likewise (they still get a seasonal value). Zeros are
 * observations. Residuals within 1e-9 of the series' size are rounding noise
 * and count as 0. This is the batch method of the paper (median and MAD, as
 * published); the on-call detector (`seasonal-detector.ts`) judges one day at a
 * time and uses mean and standard deviation by default, for calibration.
 *
 * Complexity: O(n) for the STL (fixed spans) plus O(k n^2) for the ESD.
 *
 * Example:
 *   const weekly = [5, 9, 9, 9, 9, 8, 4];
 *   const y = Array.from({ length: 56 }, (_, t) => 100 + weekly[t % 7]! + (t % 3));
 *   y[40] = 60;
 *   seasonalHybridEsd(y, { period: 7 }).anomalies // [40]
 */
import type { Alternative, GeneralizedEsdResult } from './generalized-esd.js';
import { generalizedEsd } from './generalized-esd.js';
import { median } from './robust.js';
import { stl } from './stl.js';

export interface SeasonalHybridEsdOptions {
  /** Observations per cycle. Default 7 (daily data, weekly cycle). */
  period?: number;
  /** k: the largest fraction of the observed points that may be anomalies, at most 0.49. Default 0.1. */
  maxAnomalies?: number;
  /** Significance level of the ESD test. Default 0.05. */
  alpha?: number;
  alternative?: Alternative;
  /** Per-point weights in [0, 1]; 0 keeps a day out of the decomposition fits and of the test. */
  userWeights?: ArrayLike<number>;
}

export interface SeasonalHybridEsdResult {
  /** Indices of the anomalies, ascending. */
  anomalies: number[];
  seasonal: Float64Array;
  /** median(X) over the observed, included points. */
  median: number;
  /** X - S - median(X); NaN for missing or excluded points (they are not tested). */
  residual: Float64Array;
  /** The ESD steps, with indices into the series. */
  esd: GeneralizedEsdResult;
}

export function seasonalHybridEsd(values: ArrayLike<number>, options: SeasonalHybridEsdOptions = {}): SeasonalHybridEsdResult {
  const { period = 7, maxAnomalies = 0.1, alpha = 0.05, alternative = 'two-sided', userWeights } = options;
  if (!(maxAnomalies > 0 && maxAnomalies <= 0.49)) {
    throw new Error(`seasonal hybrid ESD maxAnomalies is a fraction of the points, above 0 and at most 0.49; got ${maxAnomalies}`);
  }
  const decomposition = stl(values, { period, sWindow: 'periodic', robust: true, userWeights });
  const n = values.length;
  const included: number[] = [];
  for (let i = 0; i < n; i++) {
    if (!Number.isNaN(values[i]!) && (userWeights === undefined || userWeights[i]! > 0)) included.push(i);
  }
  const level = median(included.map((i) => values[i]!));
  // Residuals within 1e-9 of the series' size are rounding noise of the decomposition: 0, so a constant series has no spread.
  const size = Math.max(...included.map((i) => Math.abs(values[i]!)));
  const residual = new Float64Array(n).fill(Number.NaN);
  for (const i of included) {
    const r = values[i]! - decomposition.seasonal[i]! - level;
    residual[i] = Math.abs(r) <= 1e-9 * size ? 0 : r;
  }
  const maxOutliers = Math.max(1, Math.floor(maxAnomalies * included.length));
  if (included.length < maxOutliers + 2) {
    throw new Error(`seasonal hybrid ESD needs at least ${maxOutliers + 2} observed points, got ${included.length}`);
  }
  const test = generalizedEsd(
    included.map((i) => residual[i]!),
    { maxOutliers, alpha, alternative, robust: true },
  );
  const esd: GeneralizedEsdResult = {
    outlierCount: test.outlierCount,
    outliers: test.outliers.map((j) => included[j]!),
    steps: test.steps.map((s) => ({ ...s, index: included[s.index]! })),
  };
  return { anomalies: [...esd.outliers].sort((a, b) => a - b), seasonal: decomposition.seasonal, median: level, residual, esd };
}
