import { describe, expect, it } from 'vitest';
import { explain, scoreValues } from '../../checks/stats/explanatory-power.js';

/*
 * Worked by hand, formulas from Bhagwan et al., "Adtributor", NSDI 2014 (section 3):
 * country   F_j  A_j
 *   US      800  790
 *   CA      100   20
 *   MX      100   95
 * totals: F = 1000, A = 905, A - F = -95.
 * EP_US = (790 - 800) / -95 = 0.10526;  EP_CA = (20 - 100) / -95 = 0.84211;  EP_MX = (95 - 100) / -95 = 0.05263.
 * p = F_j / F: US 0.8, CA 0.1, MX 0.1.   q = A_j / A: US 790/905 = 0.872928, CA 20/905 = 0.0220994, MX 95/905 = 0.104972.
 * S_CA = 0.5 [0.1 log2(0.2 / 0.1220994) + 0.0220994 log2(0.0441989 / 0.1220994)]
 *      = 0.5 [0.1 x 0.7119433 + 0.0220994 x (-1.4659745)] = 0.5 [0.0711943 - 0.0323972] = 0.0193986
 * S_US = 0.5 [0.8 log2(1.6 / 1.672928) + 0.872928 log2(1.745856 / 1.672928)]
 *      = 0.5 [0.8 x (-0.0643036) + 0.872928 x 0.0615594] = 0.5 [-0.0514429 + 0.0537369] = 0.0011470
 * S_MX = 0.5 [0.1 log2(0.2 / 0.204972) + 0.104972 log2(0.209945 / 0.204972)] = 0.0000435
 * Adtributor with T_EEP = 0.1, T_EP = 0.67: in order of surprise CA (EP 0.842 > 0.1, total 0.842 >= 0.67: stop).
 */
describe('explanatory power and surprise (Bhagwan et al., NSDI 2014)', () => {
  const country = [
    { value: 'US', forecast: 800, actual: 790 },
    { value: 'CA', forecast: 100, actual: 20 },
    { value: 'MX', forecast: 100, actual: 95 },
  ];

  it('matches the hand-worked example', () => {
    const scored = Object.fromEntries(scoreValues(country).map((v) => [v.value, v]));
    expect(scored.US!.ep).toBeCloseTo(0.10526, 5);
    expect(scored.CA!.ep).toBeCloseTo(0.84211, 5);
    expect(scored.MX!.ep).toBeCloseTo(0.05263, 5);
    expect(scored.CA!.surprise).toBeCloseTo(0.0193986, 6);
    expect(scored.US!.surprise).toBeCloseTo(0.001147, 6);
    expect(scored.MX!.surprise).toBeCloseTo(0.0000435, 6);
    // Shares of the change always sum to 1.
    expect(Object.values(scored).reduce((sum, v) => sum + v.ep, 0)).toBeCloseTo(1, 12);
  });

  it('chooses CA alone, and prefers the dimension with the larger surprise', () => {
    // channel moved proportionally: every value's share is unchanged, so no surprise and EP spread thin.
    const channel = [
      { value: 'direct', forecast: 500, actual: 452.5 },
      { value: 'email', forecast: 300, actual: 271.5 },
      { value: 'search_ad', forecast: 200, actual: 181 },
    ];
    const result = explain([
      { dimension: 'channel', values: channel },
      { dimension: 'country', values: country },
    ]);
    expect(result.map((r) => r.dimension)).toEqual(['country', 'channel']);
    expect(result[0]!.values.map((v) => v.value)).toEqual(['CA']);
    expect(result[0]!.ep).toBeCloseTo(0.84211, 5);
    expect(result[1]!.surprise).toBeCloseTo(0, 12);
  });

  it('finds no explanation when no set of values reaches T_EP', () => {
    // Each value moves a third of the change: a single value explains 0.33 < 0.67, three together pass,
    // so raise T_EP above 1 to make sure "none" is reachable at all.
    const even = [
      { value: 'a', forecast: 100, actual: 90 },
      { value: 'b', forecast: 100, actual: 90 },
      { value: 'c', forecast: 100, actual: 90 },
    ];
    expect(explain([{ dimension: 'd', values: even }], { minValueEp: 0.1, minTotalEp: 1.01 })).toEqual([]);
  });

  it('validates its input', () => {
    expect(() => scoreValues([])).toThrow(/at least one dimension value/);
    expect(() => scoreValues([{ value: 'x', forecast: -1, actual: 2 }])).toThrow(/non-negative/);
  });
});
