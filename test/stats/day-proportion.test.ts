import { describe, expect, it } from 'vitest';
import { chiSquareHomogeneity } from '../../checks/stats/chi-square-homogeneity.js';
import { criticalValue, predictDayProportion } from '../../checks/stats/day-proportion.js';
import { normal, prng, readDayProportionCases } from './support.js';

// R's metafor::rma(yi, vi, method = "DL") and qt / qnorm: test/fixtures/day-proportion/runner.R (metafor 3.8-1, Debian).
const reference = readDayProportionCases();

describe(`day proportion against R's metafor ${reference.metafor_version} (DerSimonian-Laird)`, () => {
  for (const c of reference.cases) {
    it(`${c.case}: Q, tau^2, mean, variance, score and critical value`, () => {
      const ours = predictDayProportion(c.successes, c.trials, c.day_successes, c.day_trials);
      expect(ours.q).toBeCloseTo(c.q, 8);
      expect(Math.abs(ours.tau2 - c.tau2)).toBeLessThan(1e-12);
      expect(ours.center).toBeCloseTo(c.center, 12);
      expect(ours.variance / c.variance).toBeCloseTo(1, 10);
      expect(ours.score).toBeCloseTo(c.score, 9);
      expect(criticalValue(c.tail, ours.df)).toBeCloseTo(c.critical, 9);
      // Q is the Pearson chi-square of the baseline days (NIST-checked in chi-square-homogeneity.test.ts).
      expect(ours.q).toBeCloseTo(chiSquareHomogeneity(c.successes, c.trials).statistic, 9);
    });
  }

  it('gives the example of its doc comment', () => {
    const r = predictDayProportion([812, 776, 801, 829, 783, 795, 818], [1000, 990, 1010, 1005, 995, 1000, 1000], 740, 1000);
    expect([r.center, r.tau2 * 1e4, r.variance * 1e4, r.score].map((v) => Number(v.toFixed(4)))).toEqual([0.802, 1.0184, 2.9788, -3.5914]);
    expect(r.df).toBe(6);
  });
});

describe('day proportion calibration (simulated; no published values)', () => {
  /**
   * Share of baselines (k days of n x U(0.8, 1.2) people at rate p + tau x N(0, 1)) after which an equally drawn day
   * falls below the critical value at one-sided `tail`: by the model's rule (t on k - 1 when tau^2 > 0, else the
   * normal), and by the quasi-binomial rule it replaces (z / sqrt(phi), phi = max(1, Q / (k - 1)), against the normal).
   * Binomial draws by their normal approximation (all cells here hold 30 or more).
   */
  function falseAlarms(p: number, n: number, tau: number, k: number, tail: number, sims: number, seed: number): { model: number; quasi: number } {
    const rand = prng(seed);
    const draw = (): [number, number] => {
      const rate = Math.min(0.999, Math.max(0.001, p + tau * normal(rand)));
      const people = Math.round(n * (0.8 + 0.4 * rand()));
      return [Math.min(people, Math.max(0, Math.round(people * rate + Math.sqrt(people * rate * (1 - rate)) * normal(rand)))), people];
    };
    let model = 0;
    let quasi = 0;
    for (let s = 0; s < sims; s++) {
      const xs: number[] = [];
      const ns: number[] = [];
      for (let i = 0; i < k; i++) {
        const [x, m] = draw();
        xs.push(x);
        ns.push(m);
      }
      const [dx, dn] = draw();
      const r = predictDayProportion(xs, ns, dx, dn);
      if (r.score <= -criticalValue(tail, r.df)) model++;
      const pooled = (dx + xs.reduce((a, b) => a + b, 0)) / (dn + ns.reduce((a, b) => a + b, 0));
      const base = xs.reduce((a, b) => a + b, 0) / ns.reduce((a, b) => a + b, 0);
      const z = (dx / dn - base) / Math.sqrt(pooled * (1 - pooled) * (1 / dn + 1 / ns.reduce((a, b) => a + b, 0)));
      if (z / Math.sqrt(Math.max(1, r.q / (k - 1))) <= -criticalValue(tail, Infinity)) quasi++;
    }
    return { model: model / sims, quasi: quasi / sims };
  }

  const SIMS = 20_000;
  const TAIL = 0.01;
  const threeSe = 3 * Math.sqrt((TAIL * (1 - TAIL)) / SIMS);

  // Day-to-day variation dominating (large cohorts: 20,000 a day at 30%, 1 point of spread against a binomial 0.32) or
  // matching the binomial (1,000 a day at 80%, 1.26 points each): the model's false alarms at the nominal rate.
  for (const [name, p, n, tau, k] of [
    ['large cohorts, 7 days', 0.3, 20_000, 0.01, 7],
    ['large cohorts, 28 days', 0.3, 20_000, 0.01, 28],
    ['spread as large as the binomial, 28 days', 0.8, 1000, 0.0126, 28],
  ] as const) {
    it(`${name}: false alarms at one-sided ${TAIL} within 3 standard errors (${SIMS} simulated baselines)`, () => {
      const rates = falseAlarms(p, n, tau, k, TAIL, SIMS, 20 + k);
      console.log(`${name}: model ${rates.model.toFixed(4)}, quasi-binomial with normal critical values ${rates.quasi.toFixed(4)} (nominal ${TAIL}, 3 SE ${threeSe.toFixed(4)})`);
      expect(Math.abs(rates.model - TAIL)).toBeLessThan(threeSe);
    });
  }

  it(`binomial days: at most the nominal rate (${SIMS} simulated baselines)`, () => {
    const rates = falseAlarms(0.8, 1000, 0, 28, TAIL, SIMS, 77);
    console.log(`binomial days, 28: model ${rates.model.toFixed(4)}, quasi-binomial ${rates.quasi.toFixed(4)}`);
    expect(rates.model).toBeLessThan(TAIL + threeSe);
  });

  it('the quasi-binomial rule it replaces is far above nominal with seven days of large cohorts', () => {
    const rates = falseAlarms(0.3, 20_000, 0.01, 7, TAIL, SIMS, 27);
    expect(rates.quasi).toBeGreaterThan(2 * TAIL);
  });
});

describe('day proportion edge cases', () => {
  it('a baseline all at 0 borrows the judged day for its binomial variance; every day at 0 has no variance', () => {
    const some = predictDayProportion([0, 0, 0, 0, 0, 0, 0], [500, 500, 500, 500, 500, 500, 500], 5, 500);
    expect(some.tau2).toBe(0);
    expect(some.score).toBeGreaterThan(2);
    expect(predictDayProportion([0, 0, 0], [10, 10, 10], 0, 10)).toMatchObject({ variance: 0, score: 0 });
  });

  it('uses the normal for tau^2 = 0 and t on k - 1 otherwise', () => {
    expect(predictDayProportion([80, 80, 80], [100, 100, 100], 70, 100).df).toBe(Infinity);
    expect(predictDayProportion([60, 80, 95], [100, 100, 100], 70, 100).df).toBe(2);
    // R: qnorm(0.999) = 3.090232, qt(0.999, 6) = 5.207626.
    expect(criticalValue(0.001, Infinity)).toBeCloseTo(3.090232, 6);
    expect(criticalValue(0.001, 6)).toBeCloseTo(5.207626, 6);
    expect(criticalValue(0.001, 1e20)).toBeCloseTo(3.090232, 6);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => predictDayProportion([1], [2], 1, 2)).toThrow(/at least 2 baseline days/);
    expect(() => predictDayProportion([1, 2], [2], 1, 2)).toThrow(/one trial count per day/);
    expect(() => predictDayProportion([1, 3], [2, 2], 1, 2)).toThrow(/baseline day 1/);
    expect(() => predictDayProportion([1, 1], [2, 2], 3, 2)).toThrow(/judged day/);
    expect(() => criticalValue(0.7, 3)).toThrow(/tail probability/);
  });
});
