import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { chiSquareHomogeneity } from '../../checks/stats/chi-square-homogeneity.js';
import { twoProportionZ } from '../../checks/stats/two-proportion-z.js';

describe('two-proportion z-test', () => {
  it("matches R's prop.test without continuity correction (recomputed with R 4.2.2)", () => {
    // prop.test(c(56, 48), c(70, 80), correct = FALSE): X-squared = 7.0234113712374584, p = 0.00804508136819656.
    const a = twoProportionZ(56, 70, 48, 80);
    expect(a.z * a.z).toBeCloseTo(7.023411371237458, 10);
    expect(a.pValue).toBeCloseTo(0.00804508136819656, 12);
    // prop.test(c(9, 3), c(10, 10), correct = FALSE): X-squared = 7.5, p = 0.0061698993205441532;
    const b = twoProportionZ(9, 10, 3, 10);
    expect(b.z * b.z).toBeCloseTo(7.5, 10);
    expect(b.pValue).toBeCloseTo(0.006169899320544153, 12);
    // prop.test(c(15, 25), c(100, 90), alternative = "less", correct = FALSE): X-squared = 4.653240740740741, p = 0.015497489366202249.
    const c = twoProportionZ(15, 100, 25, 90, 'less');
    expect(c.z).toBeLessThan(0);
    expect(c.z * c.z).toBeCloseTo(4.653240740740741, 10);
    expect(c.pValue).toBeCloseTo(0.015497489366202249, 12);
  });

  it('z^2 equals the chi-square statistic of the 2 x 2 table (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 5000 }), fc.integer({ min: 1, max: 5000 }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (n1, n2, f1, f2) => {
        const x1 = Math.round(f1 * n1);
        const x2 = Math.round(f2 * n2);
        const { z } = twoProportionZ(x1, n1, x2, n2);
        const { statistic } = chiSquareHomogeneity([x1, x2], [n1, n2]);
        return Math.abs(z * z - statistic) <= 1e-8 * Math.max(1, statistic);
      }),
    );
  });

  it('returns z = 0 and p = 1 when both samples are all successes or all failures', () => {
    expect(twoProportionZ(0, 10, 0, 20)).toEqual({ z: 0, pValue: 1 });
    expect(twoProportionZ(10, 10, 20, 20)).toEqual({ z: 0, pValue: 1 });
  });

  it('rejects bad counts naming the group', () => {
    expect(() => twoProportionZ(11, 10, 1, 2)).toThrow(/group 1/);
  });
});
