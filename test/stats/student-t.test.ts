import { describe, expect, it } from 'vitest';
import { tCdf, tQuantile } from '../../checks/stats/student-t.js';

// Reference values recomputed with R 4.2.2: sprintf("%.17g", qt(p, df)) and pt(x, df).
const QUANTILES: [number, number, number][] = [
  [0.975, 10, 2.2281388519862739],
  [0.995, 3, 5.8409093097333544],
  [1 - 0.05 / (2 * 54), 52, 3.5130863811669255], // first step of the NIST generalized ESD example
  [1 - 0.05 / (2 * 45), 43, 3.4955164318885608],
  [1 - 0.05 / 8, 6, 3.5212227105092402], // NIST Grubbs example, one-sided
  [1 - 0.05 / (2 * 85), 83, 3.5743728878183223], // 12 weeks of history plus the judged day
  [0.999999, 30, 5.8711171204086243],
  [0.6, 1, 0.32491969623290634],
];
const CDF: [number, number, number][] = [
  [2.5, 5, 0.97275495032881187],
  [-1.3, 12, 0.10900858554175707],
  [4, 100, 0.99993923817784958],
  [0.2, 2, 0.57001400420140047],
];

describe('Student t', () => {
  it.each(QUANTILES)("tQuantile(%f, %i) matches R's qt to 1e-9 relative", (p, df, want) => {
    const got = tQuantile(p, df);
    expect(Math.abs(got - want) / want, `tQuantile(${p}, ${df}) = ${got}, R: ${want}`).toBeLessThan(1e-9);
  });

  it.each(CDF)("tCdf(%f, %i) matches R's pt to 1e-9", (x, df, want) => {
    expect(Math.abs(tCdf(x, df) - want), `tCdf(${x}, ${df})`).toBeLessThan(1e-9);
  });

  it('quantile and cdf are inverse', () => {
    for (const df of [1, 4, 17, 250]) for (const p of [0.01, 0.3, 0.9, 0.9999]) expect(tCdf(tQuantile(p, df), df)).toBeCloseTo(p, 9);
  });

  it('rejects bad arguments with a clear message', () => {
    expect(() => tQuantile(1, 5)).toThrow(/strictly between 0 and 1/);
    expect(() => tQuantile(0.5, 0)).toThrow(/degrees of freedom > 0/);
    expect(() => tCdf(Number.NaN, 3)).toThrow(/NaN/);
  });
});
