import { describe, expect, it } from 'vitest';
import type { Alternative } from '../../checks/stats/generalized-esd.js';
import { predictOne } from '../../checks/stats/prediction-interval.js';
import { normal, prng, readFixture } from './support.js';

/** A case of test/fixtures/prediction-interval/cases.json, written by its runner.R: R's predict(lm(y ~ 1), interval = "prediction"). */
interface Case {
  case: string;
  values: number[];
  alpha: number;
  alternative: Alternative;
  widening: number;
  low: number | null;
  high: number | null;
}

const { cases } = JSON.parse(readFixture('prediction-interval', 'cases.json')) as { cases: Case[] };

describe('one-point prediction interval (Hahn and Meeker 1991)', () => {
  it.each(cases.map((c) => [c.case, c] as const))('%s: the bounds R computes', (_name, c) => {
    const r = predictOne(c.values, { alpha: c.alpha, alternative: c.alternative, widening: c.widening });
    if (c.low === null) expect(r.low).toBe(-Infinity);
    else expect(r.low).toBeCloseTo(c.low, 9);
    if (c.high === null) expect(r.high).toBe(Infinity);
    else expect(r.high).toBeCloseTo(c.high, 9);
    expect(r.df).toBe(c.values.length - 1);
  });

  it('gives the example of its doc comment', () => {
    const r = predictOne([9.8, 10.2, 10.1, 9.9, 10.0], { alpha: 0.05 });
    expect([r.center, r.critical, r.scale, r.low, r.high].map((v) => Number(v.toFixed(4)))).toEqual([10, 2.7764, 0.1732, 9.5191, 10.4809]);
  });

  it('holds a new normal value with probability 1 - alpha (simulated: 20,000 samples of 10, within 3 standard errors)', () => {
    // Small samples, where t and the 1/n term matter: with the normal quantile and no 1/n the miss rate is 9.4% (R: 2 pt(-qnorm(0.975) / sqrt(1.1), 9)).
    const rand = prng(15);
    const N = 20_000;
    let missed = 0;
    for (let s = 0; s < N; s++) {
      const past = Array.from({ length: 10 }, () => normal(rand));
      const next = normal(rand);
      const r = predictOne(past, { alpha: 0.05 });
      if (next < r.low || next > r.high) missed++;
    }
    expect(Math.abs(missed / N - 0.05), `${missed} of ${N} outside`).toBeLessThan(3 * Math.sqrt((0.05 * 0.95) / N));
  });

  it('rejects what it cannot use', () => {
    expect(() => predictOne([1], { alpha: 0.05 })).toThrow(/at least 2/);
    expect(() => predictOne([1, 2], { alpha: 0 })).toThrow(/alpha/);
    expect(() => predictOne([1, 2], { alpha: 0.05, widening: 0 })).toThrow(/widening/);
    expect(() => predictOne([1, Number.NaN], { alpha: 0.05 })).toThrow(/finite/);
  });
});
