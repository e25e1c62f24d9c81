import { describe, expect, it } from 'vitest';
import { seasonalHybridEsd } from '../../checks/stats/hybrid-esd.js';
import { normal, prng, readFixture } from './support.js';

interface RStep {
  index: number;
  statistic: number;
  critical: number;
  center: number;
  scale: number;
}

const WEEKLY = [0, 40, 55, 60, 58, 30, -120];

function series(n: number, seed: number): number[] {
  const rand = prng(seed);
  return Array.from({ length: n }, (_, t) => 1000 + 0.5 * t + WEEKLY[t % 7]! + 10 * normal(rand));
}

describe('seasonal hybrid ESD (Hochenbaum, Vallis and Kejariwal 2017)', () => {
  it('gives the example of its doc comment', () => {
    const weekly = [5, 9, 9, 9, 9, 8, 4];
    const y = Array.from({ length: 56 }, (_, t) => 100 + weekly[t % 7]! + (t % 3));
    y[40] = 60;
    expect(seasonalHybridEsd(y, { period: 7 }).anomalies).toEqual([40]);
  });

  // Outside reference: the paper's recipe computed with R's stl, median, mad and qt (test/fixtures/seasonal-esd/runner.R).
  // Outliers of 3 to 6 noise sd, one of them (index 119) only 0.1% above its critical value and one (index 47) just
  // below: a wrong alpha, MAD constant, sidedness or degrees of freedom changes the answer.
  it("agrees with R step by step: statistics, critical values, centres, scales and the anomalies", () => {
    const r = JSON.parse(readFixture('seasonal-esd', 'hybrid-esd.json')) as { input: number[]; seasonal: number[]; median: number; steps: RStep[]; anomalies: number[] };
    const ours = seasonalHybridEsd(r.input, { period: 7, maxAnomalies: 0.1, alpha: 0.05 });
    expect(ours.anomalies).toEqual(r.anomalies);
    expect(ours.median).toBeCloseTo(r.median, 9);
    for (let i = 0; i < r.seasonal.length; i++) expect(ours.seasonal[i]!, `seasonal[${i}]`).toBeCloseTo(r.seasonal[i]!, 6);
    expect(ours.esd.steps).toHaveLength(r.steps.length);
    r.steps.forEach((step, i) => {
      const got = ours.esd.steps[i]!;
      expect(got.index, `step ${i + 1}`).toBe(step.index);
      for (const key of ['statistic', 'critical', 'center', 'scale'] as const) {
        expect(Math.abs(got[key] - step[key]), `step ${i + 1} ${key}: ours ${got[key]}, R ${step[key]}`).toBeLessThan(1e-9 * Math.max(1, Math.abs(step[key])));
      }
    });
    // The near miss that decides the count: step 5 just above its critical value, step 6 below.
    expect(r.steps[4]!.statistic / r.steps[4]!.critical).toBeGreaterThan(1);
    expect(r.steps[4]!.statistic / r.steps[4]!.critical).toBeLessThan(1.002);
  });

  it('finds injected spikes and dips in a weekly series, and nothing else', () => {
    const y = series(140, 11);
    const injected = [17, 60, 61, 103];
    y[17] = y[17]! - 300;
    y[60] = y[60]! + 250;
    y[61] = y[61]! + 260;
    y[103] = y[103]! - 200;
    const r = seasonalHybridEsd(y, { period: 7, maxAnomalies: 0.1, alpha: 0.05 });
    expect(r.anomalies, `anomalies ${r.anomalies.join(', ')}; steps ${JSON.stringify(r.esd.steps.map((s) => [s.index, s.statistic.toFixed(2), s.critical.toFixed(2)]))}`).toEqual(injected);
  });

  it('on a weekday pattern alone, a low weekend is not an anomaly (the seasonal is removed first)', () => {
    const y = series(84, 5);
    expect(seasonalHybridEsd(y).anomalies).toEqual([]);
  });

  it('leaves missing days and excluded days out of the test (residual NaN)', () => {
    const y = series(70, 3);
    y[10] = Number.NaN;
    y[20] = y[20]! + 500;
    const weights = y.map((_, i) => (i === 20 ? 0 : 1));
    const r = seasonalHybridEsd(y, { userWeights: weights });
    expect(Number.isNaN(r.residual[10]!) && Number.isNaN(r.residual[20]!)).toBe(true);
    expect(r.anomalies).not.toContain(20);
  });

  it('constant and all-zero series have no anomalies (MAD 0, no spread)', () => {
    expect(seasonalHybridEsd(new Array(35).fill(7)).anomalies).toEqual([]);
    expect(seasonalHybridEsd(new Array(35).fill(0)).anomalies).toEqual([]);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => seasonalHybridEsd(series(35, 1), { maxAnomalies: 0.6 })).toThrow(/at most 0.49/);
    expect(() => seasonalHybridEsd([1, 2, 3, 4, 5, 6, 7, 8, 9, 10])).toThrow(/stl needs at least two full periods/);
  });
});
