import { describe, expect, it } from 'vitest';
import { chiSquareHomogeneity } from '../../checks/stats/chi-square-homogeneity.js';

describe('chi-square test of homogeneity', () => {
  it('reproduces the NIST/SEMATECH e-Handbook 7.4.6 example: 12.131 on 4 df, reject at 0.05 (critical 9.4877)', () => {
    // NIST 7.4.6: five lots of 300, nonconforming 36 46 42 63 38; pooled p = 0.15, expected 45 per lot.
    const r = chiSquareHomogeneity([36, 46, 42, 63, 38], [300, 300, 300, 300, 300]);
    expect(r.df).toBe(4);
    expect(r.minExpected).toBeCloseTo(45, 12);
    expect(Math.abs(r.statistic - 12.131), `statistic ${r.statistic}`).toBeLessThan(1e-3);
    // Recomputed with R 4.2.2: chisq.test(rbind(x, 300 - x)) gives 12.130718954248366, p = 0.016405221988903707.
    expect(r.statistic).toBeCloseTo(12.130718954248366, 10);
    expect(r.pValue).toBeCloseTo(0.016405221988903707, 10);
    expect(r.pValue).toBeLessThan(0.05);
  });

  it("matches R's chisq.test on a 2 x 3 table (recomputed with R 4.2.2)", () => {
    // chisq.test(rbind(c(20, 30, 25), c(80, 70, 75)), correct = FALSE): 2.6666666666666665, p = 0.26359713811572677.
    const r = chiSquareHomogeneity([20, 30, 25], [100, 100, 100]);
    expect(r.statistic).toBeCloseTo(2.6666666666666665, 10);
    expect(r.pValue).toBeCloseTo(0.26359713811572677, 10);
  });

  it('is 0 with p = 1 for identical groups, all-zero counts included', () => {
    expect(chiSquareHomogeneity([10, 20], [100, 200]).statistic).toBeCloseTo(0, 12);
    expect(chiSquareHomogeneity([0, 0, 0], [5, 6, 7])).toEqual({ statistic: 0, df: 2, pValue: 1, minExpected: 0 });
  });

  it('rejects bad input with a clear message', () => {
    expect(() => chiSquareHomogeneity([1], [2])).toThrow(/at least 2 groups/);
    expect(() => chiSquareHomogeneity([1, 2], [2])).toThrow(/one total per count/);
    expect(() => chiSquareHomogeneity([1, 3], [2, 2])).toThrow(/group 1/);
  });
});
