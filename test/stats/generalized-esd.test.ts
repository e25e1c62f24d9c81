import { describe, expect, it } from 'vitest';
import { esdCriticalValue, generalizedEsd } from '../../checks/stats/generalized-esd.js';
import { grubbs } from '../../checks/stats/grubbs.js';

// NIST/SEMATECH e-Handbook 1.3.5.17.3, generalized ESD example (Rosner's data), n = 54.
const NIST = `-0.25 0.68 0.94 1.15 1.20 1.26 1.26 1.34 1.38 1.43 1.49 1.49 1.55 1.56
1.58 1.65 1.69 1.70 1.76 1.77 1.81 1.91 1.94 1.96 1.99 2.06 2.09 2.10 2.14 2.15
2.23 2.24 2.26 2.35 2.37 2.40 2.47 2.54 2.62 2.64 2.90 2.92 2.92 2.93 3.21 3.26
3.30 3.59 3.68 4.30 4.64 5.34 5.42 6.01`
  .split(/\s+/)
  .map(Number);
// NIST/SEMATECH e-Handbook 1.3.5.17.3: R_i, lambda_i and the value removed at step i (printed to 3 decimals, truncated).
const TABLE: [number, number, number][] = [
  [3.118, 3.158, 6.01],
  [2.942, 3.151, 5.42],
  [3.179, 3.143, 5.34],
  [2.81, 3.136, 4.64],
  [2.815, 3.128, -0.25],
  [2.848, 3.12, 4.3],
  [2.279, 3.111, 3.68],
  [2.31, 3.103, 3.59],
  [2.101, 3.094, 0.68],
  [2.067, 3.085, 3.3],
];

describe('generalized ESD (Rosner 1983)', () => {
  const result = generalizedEsd(NIST, { maxOutliers: 10, alpha: 0.05 });

  it('reproduces all ten R_i and lambda_i of NIST/SEMATECH 1.3.5.17.3 within 1e-3', () => {
    expect(NIST.length).toBe(54);
    TABLE.forEach(([r, lambda, removed], k) => {
      const step = result.steps[k]!;
      const message = `step ${k + 1}: R ${step.statistic}, lambda ${step.critical}, removed ${step.value}; NIST ${r}, ${lambda}, ${removed}`;
      expect(Math.abs(step.statistic - r), message).toBeLessThan(1e-3);
      expect(Math.abs(step.critical - lambda), message).toBeLessThan(1e-3);
      expect(step.value, message).toBe(removed);
    });
  });

  it('finds exactly three outliers, 6.01, 5.42 and 5.34 (NIST/SEMATECH 1.3.5.17.3)', () => {
    expect(result.outlierCount).toBe(3);
    expect(result.outliers.map((i) => NIST[i])).toEqual([6.01, 5.42, 5.34]);
  });

  it('first step equals Grubbs two-sided statistic (same definition, NIST 1.3.5.17.1)', () => {
    expect(result.steps[0]!.statistic).toBeCloseTo(grubbs(NIST).statistic, 12);
  });

  it('one-sided alternatives only look in their direction', () => {
    const data = [10, 11, 9, 10, 12, 10, 11, 9, 10, 11, 10, 9, 12, 10, 11, 10, 9, 11, 10, 10, 30, -10];
    expect(generalizedEsd(data, { maxOutliers: 2, alternative: 'greater' }).outliers).toEqual([20]);
    expect(generalizedEsd(data, { maxOutliers: 2, alternative: 'less' }).outliers).toEqual([21]);
    expect(generalizedEsd(data, { maxOutliers: 2 }).outliers.sort()).toEqual([20, 21]);
  });

  it('robust variant (median, MAD) finds the doc example outlier and stops on a constant series', () => {
    expect(generalizedEsd([1, 2, 3, 2, 1, 2, 50], { maxOutliers: 2, robust: true }).outliers).toEqual([6]);
    expect(generalizedEsd([1, 2, 3, 2, 1, 2, 50], { maxOutliers: 2 }).outliers).toEqual([6]);
    const flat = generalizedEsd([5, 5, 5, 5, 5, 5], { maxOutliers: 2, robust: true });
    expect(flat).toEqual({ steps: [], outlierCount: 0, outliers: [] });
  });

  it('robust variant scores values against a zero MAD with the mean-absolute-deviation fallback', () => {
    // Mostly-zero counts: MAD 0, scale 1.2533 * mean |x - median| (common practice fallback, see robust.ts):
    // finite statistics, the 40 removed first. (On such data even the ones stand out once the 40 is gone.)
    const counts = [0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 40, 0, 0, 0, 0, 0];
    const r = generalizedEsd(counts, { maxOutliers: 3, robust: true });
    expect(r.steps[0]!.index).toBe(14);
    expect(r.steps[0]!.scale).toBeCloseTo(Math.sqrt(Math.PI / 2) * (42 / 20), 12);
    expect(r.steps.every((s) => Number.isFinite(s.statistic))).toBe(true);
  });

  it('critical value follows the formula with R qt (R 4.2.2: lambda_1 for n = 54 is 3.1587939...)', () => {
    // (n-1) t / sqrt((n-2+t^2) n), t = qt(1 - 0.05/108, 52) = 3.5130863811669255 (R).
    const t = 3.5130863811669255;
    expect(esdCriticalValue(54, 1, 0.05)).toBeCloseTo((53 * t) / Math.sqrt((52 + t * t) * 54), 9);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => generalizedEsd([1, 2], { maxOutliers: 1 })).toThrow(/at least 3 values/);
    expect(() => generalizedEsd([1, 2, 3, 4], { maxOutliers: 3 })).toThrow(/from 1 to n - 2 = 2/);
    expect(() => generalizedEsd([1, Number.NaN, 3, 4], { maxOutliers: 1 })).toThrow(/value 1 is NaN/);
    expect(() => generalizedEsd([1, 2, 3, 4], { maxOutliers: 1, alpha: 2 })).toThrow(/alpha/);
  });
});
