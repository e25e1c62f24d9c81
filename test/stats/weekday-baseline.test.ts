import { describe, expect, it } from 'vitest';
import { weekdayBaseline } from '../../checks/stats/weekday-baseline.js';

describe('weekday baseline (median of the same weekday over the last k weeks, common practice)', () => {
  // Mondays at 0, 7, 14, 21 are 10, 12, 11, 30; other days 50.
  const series = Array.from({ length: 29 }, (_, t) => (t % 7 === 0 ? ([10, 12, 11, 30, 99][t / 7] ?? 0) : 50));

  it('gives the example of its doc comment: median of 10, 12, 11, 30 is 11.5', () => {
    expect(weekdayBaseline(series, 28, { weeks: 4 })).toEqual({ expected: 11.5, used: 4 });
  });

  it('looks back only k weeks', () => {
    expect(weekdayBaseline(series, 28, { weeks: 2 })).toEqual({ expected: 20.5, used: 2 });
  });

  it('skips missing days (NaN) and excluded days, but uses zeros', () => {
    const s = series.slice();
    s[21] = Number.NaN;
    expect(weekdayBaseline(s, 28, { weeks: 4 })).toEqual({ expected: 11, used: 3 });
    s[21] = 0;
    expect(weekdayBaseline(s, 28, { weeks: 4 })).toEqual({ expected: 10.5, used: 4 });
    const weights = s.map((_, i) => (i === 21 ? 0 : 1));
    expect(weekdayBaseline(s, 28, { weeks: 4, userWeights: weights })).toEqual({ expected: 11, used: 3 });
  });

  it('returns NaN when no earlier same weekday exists', () => {
    expect(weekdayBaseline(series, 3)).toEqual({ expected: Number.NaN, used: 0 });
  });

  it('rejects bad arguments with a clear message', () => {
    expect(() => weekdayBaseline(series, 29)).toThrow(/index must be a position/);
    expect(() => weekdayBaseline(series, 5, { weeks: 0 })).toThrow(/weeks must be a whole number/);
    expect(() => weekdayBaseline(series, 5, { userWeights: [1] })).toThrow(/one entry per value/);
  });
});
