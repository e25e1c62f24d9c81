import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loess } from '../../checks/stats/loess.js';

/**
 * Brute-force reference written from the definition (Cleveland et al. 1990,
 * appendix; R's stl smoother): for each point the window is the `span` nearest
 * points ([0, q-1] near the start, [n-q, n-1] near the end, for an even span the
 * extra point on the right), h the largest distance in it (plus (q - n) / 2 when
 * q > n), tricube weights with the 0.001/0.999 cut-offs times the extra weights,
 * then weighted least squares of degree 0 or 1 solved directly. A degree-1 fit
 * whose weighted positions spread less than 0.001 (n - 1) falls back to the
 * weighted mean, and a window with no weight returns the observation.
 */
function reference(y: number[], span: number, degree: 0 | 1, w: number[]): number[] {
  const n = y.length;
  const half = Math.floor((span + 1) / 2);
  return y.map((_, i) => {
    // The span nearest points: centred, shifted inside at the ends.
    const lo = span >= n ? 0 : Math.min(Math.max(i - (half - 1), 0), n - span);
    const hi = span >= n ? n - 1 : lo + span - 1;
    let h = Math.max(i - lo, hi - i);
    if (span > n) h += Math.floor((span - n) / 2);
    let sw = 0;
    let sx = 0;
    let sy = 0;
    let sxx = 0;
    let sxy = 0;
    for (let j = lo; j <= hi; j++) {
      const r = Math.abs(j - i);
      const t = r > 0.999 * h ? 0 : r <= 0.001 * h ? 1 : (1 - (r / h) ** 3) ** 3;
      const k = t * w[j]!;
      sw += k;
      sx += k * j;
      sy += k * y[j]!;
      sxx += k * j * j;
      sxy += k * j * y[j]!;
    }
    if (!(sw > 0)) return y[i]!;
    const mean = sy / sw;
    if (degree === 0 || h === 0) return mean;
    const xbar = sx / sw;
    const varx = sxx / sw - xbar * xbar;
    if (!(Math.sqrt(varx) > 0.001 * (n - 1))) return mean;
    const slope = (sxy / sw - xbar * mean) / varx;
    return mean + slope * (i - xbar);
  });
}

function close(a: ArrayLike<number>, b: ArrayLike<number>, tol: number): boolean {
  for (let i = 0; i < a.length; i++) {
    if (!(Math.abs(a[i]! - b[i]!) <= tol * Math.max(1, Math.abs(b[i]!)))) return false;
  }
  return a.length === b.length;
}

describe('loess', () => {
  it('matches direct weighted least squares at every point when jump = 1 (property)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: -1000, max: 1000, noNaN: true }), { minLength: 2, maxLength: 60 }),
        fc.integer({ min: 1, max: 70 }),
        fc.constantFrom<0 | 1>(0, 1),
        fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 60, maxLength: 60 }),
        (y, span, degree, rawWeights) => {
          const weights = rawWeights.slice(0, y.length);
          const ours = loess(y, { span, degree, weights });
          const want = reference(y, span, degree, weights);
          if (!close(ours, want, 1e-7)) {
            console.log('loess mismatch', { y, span, degree, weights, ours: Array.from(ours), want });
            return false;
          }
          return true;
        },
      ),
      { numRuns: 400 },
    );
  });

  it('with jump > 1 fits every jump-th point (and the last) as jump = 1 does and interpolates linearly between (property)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 3, maxLength: 80 }),
        fc.integer({ min: 1, max: 25 }),
        fc.integer({ min: 2, max: 9 }),
        fc.constantFrom<0 | 1>(0, 1),
        (y, span, jump, degree) => {
          const full = loess(y, { span, degree });
          const jumped = loess(y, { span, degree, jump });
          const n = y.length;
          const step = Math.min(jump, n - 1);
          const fitted: number[] = [];
          for (let i = 0; i < n; i += step) fitted.push(i);
          if (fitted[fitted.length - 1] !== n - 1) fitted.push(n - 1);
          const expected = new Float64Array(n);
          for (let k = 0; k + 1 < fitted.length; k++) {
            const a = fitted[k]!;
            const b = fitted[k + 1]!;
            for (let i = a; i <= b; i++) expected[i] = full[a]! + ((full[b]! - full[a]!) * (i - a)) / (b - a);
          }
          // The last point uses the window of the last jump, which equals its own window unless the jump is wider than half the span.
          const ok = close(jumped, expected, 1e-9) || step > (span - 1) / 2;
          if (!ok) console.log('jump mismatch', { y, span, jump, degree, jumped: Array.from(jumped), expected: Array.from(expected) });
          return ok;
        },
      ),
      { numRuns: 300 },
    );
  });

  it('gives the example of its doc comment', () => {
    // Values printed by our implementation and equal to the brute-force reference above (no published source).
    const y = [1, 2, 8, 4, 5, 6, 7];
    const out = Array.from(loess(y, { span: 5, degree: 1 }), (v) => Number(v.toFixed(4)));
    expect(out, `loess(${y.join(', ')}; span 5, degree 1)`).toEqual([0.8178, 3.1692, 5.1369, 5.4316, 5, 6, 7]);
    expect(close(loess(y, { span: 5, degree: 1 }), reference(y, 5, 1, [1, 1, 1, 1, 1, 1, 1]), 1e-12)).toBe(true);
  });

  it('reproduces a constant and a straight line exactly (degree 1)', () => {
    const line = Array.from({ length: 30 }, (_, i) => 3 + 0.5 * i);
    expect(close(loess(line, { span: 7, degree: 1 }), line, 1e-12)).toBe(true);
    expect(close(loess(new Array(10).fill(4), { span: 5, degree: 0 }), new Array(10).fill(4), 1e-15)).toBe(true);
  });

  it('returns the observation where a window has no weight', () => {
    const y = [1, 2, 3, 100, 5, 6, 7];
    const out = loess(y, { span: 1, degree: 0, weights: [1, 1, 1, 0, 1, 1, 1] });
    expect(out[3]).toBe(100);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => loess([], { span: 3 })).toThrow(/at least one value/);
    expect(() => loess([1, 2, 3], { span: 0 })).toThrow(/span must be a whole number/);
    expect(() => loess([1, Number.NaN, 3], { span: 3 })).toThrow(/finite values; value 1 is NaN/);
    expect(() => loess([1, 2, 3], { span: 3, weights: [1, 1] })).toThrow(/one entry per value/);
    expect(() => loess([1, 2, 3], { span: 3, weights: [1, -1, 1] })).toThrow(/>= 0/);
    expect(() => loess([1, 2, 3], { span: 3, jump: 0 })).toThrow(/jump/);
  });
});
