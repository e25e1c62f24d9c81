import { describe, expect, it } from 'vitest';
import { rateComparison } from '../../checks/stats/rate-comparison.js';

describe('rateComparison (conditional binomial score test)', () => {
  it('matches R prop.test(x1, x1 + x2, p = e1 / (e1 + e2), correct = FALSE)', () => {
    // R 4.2: prop.test(30, 100, p = 0.5, correct = FALSE) -> X-squared = 16, p-value = 6.334248367e-05
    const equalExposure = rateComparison(30, 1, 70, 1);
    expect(equalExposure.z ** 2).toBeCloseTo(16, 9);
    expect(equalExposure.z).toBeLessThan(0);
    expect(equalExposure.pValue).toBeCloseTo(6.334248367e-5, 12);
    // R 4.2: prop.test(12, 52, p = 200/700, correct = FALSE) -> X-squared = 0.7692307692, p-value = 0.3804551253
    const unequal = rateComparison(12, 200, 40, 500);
    expect(unequal.z ** 2).toBeCloseTo(0.7692307692, 9);
    expect(unequal.pValue).toBeCloseTo(0.3804551253, 9);
    expect(unequal.ratio).toBeCloseTo(12 / 200 / (40 / 500), 12);
  });

  it('one-sided p-values split the two-sided one', () => {
    const less = rateComparison(30, 1, 70, 1, 'less');
    const greater = rateComparison(30, 1, 70, 1, 'greater');
    expect(less.pValue).toBeCloseTo(6.334248367e-5 / 2, 12);
    expect(greater.pValue).toBeCloseTo(1 - 6.334248367e-5 / 2, 12);
  });

  it('handles empty counts and rejects bad input', () => {
    expect(rateComparison(0, 10, 0, 20)).toMatchObject({ z: 0, pValue: 1 });
    expect(() => rateComparison(-1, 1, 2, 1)).toThrow(/non-negative counts/);
    expect(() => rateComparison(1, 0, 2, 1)).toThrow(/positive exposures/);
  });
});
