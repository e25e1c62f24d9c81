import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { mad, median, medianInPlace, medianNear, robustLocationScale, selectInPlace } from '../../checks/stats/robust.js';

function sortedMedian(x: number[]): number {
  const s = [...x].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

const values = fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: 1, maxLength: 200 });
// Many ties: small integers.
const tied = fc.array(fc.integer({ min: -3, max: 3 }), { minLength: 1, maxLength: 200 });

describe('median and MAD', () => {
  it('median equals the sort-based median (property)', () => {
    // simple-statistics averages the two middle values as a + (b - a) / 2: equal up to one rounding (or a subnormal).
    fc.assert(fc.property(fc.oneof(values, tied), (x) => Math.abs(median(x) - sortedMedian(x)) <= 4 * Number.EPSILON * Math.abs(sortedMedian(x)) + 1e-300));
  });

  it('medianInPlace equals the sort-based median (property)', () => {
    fc.assert(fc.property(fc.oneof(values, tied), (x) => medianInPlace(Float64Array.from(x), x.length) === sortedMedian(x)));
  });

  it('selectInPlace puts the k-th smallest at k with smaller values before it (property)', () => {
    fc.assert(
      fc.property(fc.oneof(values, tied), fc.nat(), (x, seed) => {
        const k = seed % x.length;
        const a = Float64Array.from(x);
        selectInPlace(a, 0, a.length - 1, k);
        const want = [...x].sort((p, q) => p - q)[k]!;
        for (let i = 0; i < k; i++) if (!(a[i]! <= a[k]!)) return false;
        for (let i = k + 1; i < a.length; i++) if (!(a[i]! >= a[k]!)) return false;
        return a[k] === want;
      }),
    );
  });

  it('MAD equals 1.4826 times the sort-based median of absolute deviations (property)', () => {
    fc.assert(
      fc.property(fc.oneof(values, tied), (x) => {
        const c = sortedMedian(x);
        const want = 1.4826 * sortedMedian(x.map((v) => Math.abs(v - c)));
        return Math.abs(mad(x) - want) <= 1e-9 * Math.max(1, want);
      }),
    );
  });

  it('gives the example of its doc comment', () => {
    expect(median([1, 2, 3, 4, 100])).toBe(3);
    expect(mad([1, 2, 3, 4, 100])).toBeCloseTo(1.4826, 12);
    expect(mad([1, 2, 3], 0)).toBeCloseTo(1.4826 * 2, 12);
  });

  it("agrees with R's mad() (recomputed with R 4.2.2: mad(c(2.1, 3.7, 1.2, 9.9, 4.4, 3.3)) = 1.70499)", () => {
    expect(mad([2.1, 3.7, 1.2, 9.9, 4.4, 3.3])).toBeCloseTo(1.70499, 12);
  });

  it('is 0 for a constant series; robustLocationScale falls back to the mean absolute deviation when the MAD is 0', () => {
    expect(mad([4, 4, 4, 4])).toBe(0);
    expect(robustLocationScale([4, 4, 4, 4])).toEqual({ center: 4, scale: 0 });
    // Mostly zeros (MAD 0) with two non-zero days: scale = sqrt(pi/2) * mean |x - 0| = 1.2533 * (5 + 7) / 10 (common practice).
    const r = robustLocationScale([0, 0, 0, 0, 0, 0, 0, 0, 5, 7]);
    expect(r.center).toBe(0);
    expect(r.scale).toBeCloseTo(Math.sqrt(Math.PI / 2) * 1.2, 12);
  });

  it('rejects NaN and empty input with a clear message', () => {
    expect(() => median([])).toThrow(/at least one value/);
    expect(() => median([1, Number.NaN])).toThrow(/finite values; value 1 is NaN/);
    expect(() => mad([1, 2], Number.NaN)).toThrow(/center must be finite/);
  });
});

describe('medianNear', () => {
  it('equals the sort-based median for any guess (property)', () => {
    fc.assert(
      fc.property(fc.oneof(values, tied), fc.double({ min: -10, max: 1e6, noNaN: true }), fc.boolean(), (x, rawGuess, near) => {
        const abs = x.map(Math.abs);
        const guess = near ? sortedMedian(abs) * (1 + (rawGuess % 0.15)) : rawGuess;
        const got = medianNear(Float64Array.from(abs), abs.length, guess, new Float64Array(abs.length));
        return got === sortedMedian(abs);
      }),
    );
  });
});
