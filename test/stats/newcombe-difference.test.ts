import { describe, expect, it } from 'vitest';
import { newcombeDifference } from '../../checks/stats/newcombe-difference.js';

// Newcombe 1998, Stat Med 17:873-890, method 10 (hybrid score), 95%: values as given in the
// project's references (recomputed, matching those quoted from the paper's table to 4 dp).
const TABLE: [number, number, number, number, number, number][] = [
  [56, 70, 48, 80, 0.0524, 0.3339],
  [9, 10, 3, 10, 0.1705, 0.809],
  [5, 56, 0, 29, -0.0381, 0.1926],
  [10, 10, 0, 20, 0.6791, 1.0],
];

describe("Newcombe's hybrid score interval for p1 - p2 (method 10)", () => {
  it.each(TABLE)('%i/%i - %i/%i -> %f to %f (Newcombe 1998, 4 dp)', (x1, n1, x2, n2, low, high) => {
    const r = newcombeDifference(x1, n1, x2, n2, 0.95);
    expect(Number(r.low.toFixed(4)), JSON.stringify({ x1, n1, x2, n2, r })).toBe(low);
    expect(Number(r.high.toFixed(4)), JSON.stringify({ x1, n1, x2, n2, r })).toBe(high);
  });

  it('is antisymmetric when the groups are swapped', () => {
    const a = newcombeDifference(56, 70, 48, 80);
    const b = newcombeDifference(48, 80, 56, 70);
    expect(b.low).toBeCloseTo(-a.high, 12);
    expect(b.high).toBeCloseTo(-a.low, 12);
    expect(a.difference).toBeCloseTo(0.2, 12);
  });

  it('rejects bad counts naming the group', () => {
    expect(() => newcombeDifference(5, 4, 1, 2)).toThrow(/group 1/);
    expect(() => newcombeDifference(1, 4, 1, 0)).toThrow(/group 2/);
  });
});
