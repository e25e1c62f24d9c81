import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { wilson } from '../../checks/stats/wilson.js';

// Newcombe 1998, Stat Med 17:857-872 (method 3, Wilson score without continuity correction), 95%:
// values as given in the project's references (recomputed, matching the paper's table to 4 dp).
const TABLE: [number, number, number, number][] = [
  [81, 263, 0.2553, 0.3662],
  [15, 148, 0.0624, 0.1605],
  [0, 20, 0, 0.1611],
  [1, 29, 0.0061, 0.1718],
];

describe('Wilson score interval', () => {
  it.each(TABLE)('%i/%i -> %f to %f (Newcombe 1998, 4 dp)', (x, n, low, high) => {
    const r = wilson(x, n, 0.95);
    expect(Number(r.low.toFixed(4)), `wilson(${x}, ${n}) = ${JSON.stringify(r)}`).toBe(low);
    expect(Number(r.high.toFixed(4)), `wilson(${x}, ${n}) = ${JSON.stringify(r)}`).toBe(high);
  });

  it('contains the observed proportion and stays inside [0, 1] (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 100000 }), fc.double({ min: 0, max: 1, noNaN: true }), fc.constantFrom(0.8, 0.9, 0.95, 0.99), (n, f, c) => {
        const x = Math.round(f * n);
        const r = wilson(x, n, c);
        return r.low >= 0 && r.high <= 1 && r.low <= x / n + 1e-12 && x / n <= r.high + 1e-12;
      }),
    );
  });

  it('is exactly 1 at x = n and widens with confidence', () => {
    expect(wilson(20, 20).high).toBe(1);
    expect(wilson(5, 20, 0.99).high).toBeGreaterThan(wilson(5, 20, 0.95).high);
  });

  it('rejects bad counts with a clear message', () => {
    expect(() => wilson(3, 0)).toThrow(/trials >= 1/);
    expect(() => wilson(5, 4)).toThrow(/successes from 0 to n = 4/);
    expect(() => wilson(1.5, 4)).toThrow(/whole number of successes/);
    expect(() => wilson(1, 4, 1)).toThrow(/confidence/);
  });
});
