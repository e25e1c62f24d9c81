import { describe, expect, it } from 'vitest';
import { grubbs } from '../../checks/stats/grubbs.js';

// NIST/SEMATECH e-Handbook 1.3.5.17.1, Grubbs' test example.
const DATA = [199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57];

describe("Grubbs' test", () => {
  it('reproduces G = 2.4687 and the one-sided critical value 2.032 (NIST/SEMATECH 1.3.5.17.1)', () => {
    const r = grubbs(DATA, { alternative: 'greater', alpha: 0.05 });
    // NIST truncates: G = 2.46876..., printed 2.4687; critical 2.03165..., printed 2.032.
    expect(Math.abs(r.statistic - 2.4687), `G = ${r.statistic}`).toBeLessThan(1e-4);
    expect(Math.abs(r.critical - 2.032), `critical = ${r.critical}`).toBeLessThan(1e-3);
    expect(r.outlier).toBe(true);
    expect(r.value).toBe(245.57);
  });

  it('two-sided: same G, larger critical value (t at alpha / 2N); still an outlier', () => {
    const r = grubbs(DATA);
    expect(Math.abs(r.statistic - 2.4687)).toBeLessThan(1e-4);
    expect(r.critical).toBeGreaterThan(2.032);
    expect(r.outlier).toBe(true);
  });

  it("the minimum of the NIST data is not an outlier ('less')", () => {
    expect(grubbs(DATA, { alternative: 'less' }).outlier).toBe(false);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => grubbs([1, 2])).toThrow(/at least 3 values/);
    expect(() => grubbs([3, 3, 3])).toThrow(/not all equal/);
    expect(() => grubbs([1, Number.NaN, 3])).toThrow(/value 1 is NaN/);
  });
});
