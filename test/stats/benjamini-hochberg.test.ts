import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { benjaminiHochberg } from '../../checks/stats/benjamini-hochberg.js';
import { readFixture } from './support.js';

/** A case of test/fixtures/benjamini-hochberg/cases.json, written by its runner.R: R's p.adjust(p, method = "BH"). */
interface Case {
  case: string;
  p: Array<number | null>;
  q: number;
  adjusted: Array<number | null>;
  rejected: boolean[];
}

const CASES = JSON.parse(readFixture('benjamini-hochberg', 'cases.json')) as Case[];
const nan = (values: Array<number | null>) => values.map((v) => (v === null ? Number.NaN : v));

describe('Benjamini-Hochberg', () => {
  it.each(CASES.map((c) => [c.case, c] as const))('%s: adjusted p-values and rejections as R p.adjust(method = "BH")', (_name, c) => {
    const result = benjaminiHochberg(nan(c.p), c.q);
    result.adjusted.forEach((value, i) => {
      const expected = c.adjusted[i];
      if (expected === null) expect(value, `test ${i}`).toBeNaN();
      else expect(value, `test ${i}`).toBeCloseTo(expected!, 14);
    });
    expect(result.rejected).toEqual(c.rejected);
  });

  it('rejects four of the paper\'s fifteen at q = 0.05 where Bonferroni rejects three (Benjamini and Hochberg 1995, section 4)', () => {
    const paper = CASES.find((c) => c.case === 'paper section 4')!;
    const p = nan(paper.p);
    expect(benjaminiHochberg(p, 0.05).rejected.filter(Boolean).length).toBe(4);
    expect(p.filter((value) => value <= 0.05 / p.length).length).toBe(3);
  });

  it('rejects at least what Bonferroni rejects and never more than the unadjusted tests (property)', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 1, maxLength: 60 }), fc.constantFrom(0.01, 0.05, 0.1), (p, q) => {
        const { rejected } = benjaminiHochberg(p, q);
        return p.every((value, i) => (value <= q / p.length ? rejected[i] : true) && (rejected[i] ? value <= q : true));
      }),
    );
  });

  it('says what to fix for a p-value outside [0, 1] or a q outside (0, 1]', () => {
    expect(() => benjaminiHochberg([0.2, 1.5])).toThrow(/p-values must lie in \[0, 1\]/);
    expect(() => benjaminiHochberg([0.2], 0)).toThrow(/false discovery rate q/);
  });
});
