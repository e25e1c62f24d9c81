import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { StlResult } from '../../checks/stats/stl.js';
import { stl } from '../../checks/stats/stl.js';
import { fixturePath, normal, prng } from './support.js';

/** A case written by test/fixtures/stl/runner.R: R's inputs, parameters and outputs. */
interface RCase {
  case: string;
  call: string;
  r_version: string;
  period: number;
  s_window: number | 'periodic';
  win: { s: number; t: number; l: number };
  deg: { s: 0 | 1; t: 0 | 1; l: 0 | 1 };
  jump: { s: number; t: number; l: number };
  inner: number;
  outer: number;
  input: number[];
  seasonal: number[];
  trend: number[];
  remainder: number[];
  weights: number[];
}

// nyc-taxi-log1p: the NYC taxi counts on log(1 + x), the scale the seasonal check judges counts on.
const CASES = ['co2-swindow7', 'co2-periodic', 'daily-robust', 'daily-robust-periodic', 'co2-custom', 'daily-even-outer4', 'co2-even-spans', 'nyc-taxi-log1p'];

function readCase(dir: string, name: string): RCase {
  return JSON.parse(readFileSync(join(dir, `${name}.json`), 'utf8')) as RCase;
}

/** Our STL with the parameters R reports (R passes s.window, t.window, ... as given; the jumps as computed). */
function ours(c: RCase): StlResult {
  return stl(c.input, {
    period: c.period,
    sWindow: c.s_window,
    sDegree: c.deg.s,
    tWindow: c.win.t,
    tDegree: c.deg.t,
    lWindow: c.win.l,
    lDegree: c.deg.l,
    sJump: c.jump.s,
    tJump: c.jump.t,
    lJump: c.jump.l,
    inner: c.inner,
    outer: c.outer,
  });
}

/**
 * Every element within a relative 1e-6 of R's (plus 1e-12 of the series' size, for
 * elements R computes as exactly 0). Returns the worst element for the message.
 */
function compare(c: RCase, got: StlResult): { ok: boolean; detail: string } {
  const size = Math.max(...c.input.map(Math.abs));
  let worst = { rel: 0, component: '', index: -1, ours: 0, r: 0 };
  let ok = true;
  for (const component of ['seasonal', 'trend', 'remainder', 'weights'] as const) {
    const want = c[component];
    const have = got[component];
    for (let i = 0; i < want.length; i++) {
      const diff = Math.abs(have[i]! - want[i]!);
      if (!(diff <= 1e-6 * Math.abs(want[i]!) + 1e-12 * size)) ok = false;
      const rel = diff / Math.max(Math.abs(want[i]!), 1e-12 * size);
      if (!(rel <= worst.rel)) worst = { rel, component, index: i, ours: have[i]!, r: want[i]! };
    }
  }
  return { ok, detail: `${c.case} (${c.call}): worst relative difference ${worst.rel.toExponential(2)} in ${worst.component}[${worst.index}] (ours ${worst.ours}, R ${worst.r})` };
}

describe("stl against R's stats::stl (fixtures written by test/fixtures/stl/runner.R, R 4.2.2)", () => {
  for (const name of CASES) {
    it(`${name}: seasonal, trend, remainder and weights within a relative 1e-6`, () => {
      const c = readCase(fixturePath('stl'), name);
      const { ok, detail } = compare(c, ours(c));
      if (!ok) console.log('STL differs from R', { input: c.input, call: c.call });
      expect(ok, detail).toBe(true);
    });
  }

  it("uses R's default windows, degrees, jumps and loop counts", () => {
    // R's stl defaults (documented in ?stl): as reported by R in the fixtures.
    for (const name of ['co2-swindow7', 'co2-periodic', 'daily-robust', 'daily-robust-periodic', 'nyc-taxi-log1p']) {
      const c = readCase(fixturePath('stl'), name);
      const p = stl(c.input, { period: c.period, sWindow: c.s_window, robust: c.outer > 0 }).parameters;
      expect({ t: p.tWindow, l: p.lWindow, sJump: p.sJump, tJump: p.tJump, lJump: p.lJump, inner: p.inner, outer: p.outer }, name).toEqual({
        t: c.win.t,
        l: c.win.l,
        sJump: c.jump.s,
        tJump: c.jump.t,
        lJump: c.jump.l,
        inner: c.inner,
        outer: c.outer,
      });
    }
  });

  const rscript = spawnSync('Rscript', ['--version'], { encoding: 'utf8' }).status === 0;
  it.skipIf(!rscript)('agrees with R run live now (Rscript on PATH), and the committed fixtures are what R writes', () => {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-stl-'));
    try {
      execFileSync('Rscript', [fixturePath('stl', 'runner.R'), dir], { stdio: 'pipe' });
      for (const name of CASES) {
        const fresh = readCase(dir, name);
        const { ok, detail } = compare(fresh, ours(fresh));
        expect(ok, `live R: ${detail}`).toBe(true);
        const committed = readCase(fixturePath('stl'), name);
        expect(fresh.input, `${name}: committed input differs from what runner.R writes now`).toEqual(committed.input);
        const drift = compare(committed, {
          seasonal: Float64Array.from(fresh.seasonal),
          trend: Float64Array.from(fresh.trend),
          remainder: Float64Array.from(fresh.remainder),
          weights: Float64Array.from(fresh.weights),
        } as StlResult);
        expect(drift.ok, `${name}: this R (${fresh.r_version}) differs from the committed fixture: ${drift.detail}`).toBe(true);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('stl behaviour', () => {
  const rand = prng(7);
  const daily = Array.from({ length: 120 }, (_, t) => 500 + 2 * t + [0, 30, 40, 45, 42, 10, -80][t % 7]! + 8 * normal(rand));

  it('adds up: y = seasonal + trend + remainder', () => {
    const r = stl(daily, { period: 7, sWindow: 7, robust: true });
    for (let i = 0; i < daily.length; i++) expect(r.seasonal[i]! + r.trend[i]! + r.remainder[i]!).toBeCloseTo(daily[i]!, 9);
  });

  it("with sWindow 'periodic' repeats the seasonal exactly every period", () => {
    const r = stl(daily, { period: 7, sWindow: 'periodic' });
    for (let i = 7; i < daily.length; i++) expect(r.seasonal[i]).toBe(r.seasonal[i - 7]);
  });

  it('treats a missing day (NaN) as left out: same fit as weight 0 with any value, remainder NaN', () => {
    const withNaN = daily.slice();
    withNaN[50] = Number.NaN;
    const a = stl(withNaN, { period: 7, sWindow: 7, robust: true });
    const b = stl(
      daily.map((v, i) => (i === 50 ? 1e9 : v)),
      { period: 7, sWindow: 7, robust: true, userWeights: daily.map((_, i) => (i === 50 ? 0 : 1)) },
    );
    expect(Number.isNaN(a.remainder[50]!)).toBe(true);
    expect(Number.isFinite(a.seasonal[50]!) && Number.isFinite(a.trend[50]!)).toBe(true);
    expect(a.weights[50]).toBe(0);
    for (let i = 0; i < daily.length; i++) {
      expect(a.seasonal[i]!, `seasonal[${i}]`).toBeCloseTo(b.seasonal[i]!, 8);
      expect(a.trend[i]!, `trend[${i}]`).toBeCloseTo(b.trend[i]!, 8);
    }
  });

  it('treats a zero day as an observation (unlike a missing day)', () => {
    const zero = daily.slice();
    zero[50] = 0;
    const missing = daily.slice();
    missing[50] = Number.NaN;
    const z = stl(zero, { period: 7, sWindow: 7 });
    const m = stl(missing, { period: 7, sWindow: 7 });
    expect(Math.abs(z.trend[50]! - m.trend[50]!)).toBeGreaterThan(1);
    expect(z.remainder[50]).toBeLessThan(-300);
  });

  it('decomposes a constant series into a zero seasonal, a flat trend and no remainder, robust or not (MAD 0)', () => {
    for (const robust of [false, true]) {
      const r = stl(new Array(30).fill(5), { period: 7, sWindow: 7, robust });
      for (let i = 0; i < 30; i++) {
        expect(Math.abs(r.seasonal[i]!), `robust ${robust}, seasonal[${i}]`).toBeLessThan(1e-12);
        expect(r.trend[i], `robust ${robust}, trend[${i}]`).toBeCloseTo(5, 12);
        expect(Math.abs(r.remainder[i]!), `robust ${robust}, remainder[${i}]`).toBeLessThan(1e-12);
        // Robust weights of a perfect fit only reflect rounding noise (R's are the same kind); unweighted ones are 1.
        if (!robust) expect(r.weights[i]).toBe(1);
      }
    }
  });

  it('handles all-zero days as data', () => {
    const r = stl(new Array(21).fill(0), { period: 7, sWindow: 'periodic', robust: true });
    expect(Array.from(r.trend).every((v) => v === 0) && Array.from(r.remainder).every((v) => v === 0)).toBe(true);
  });

  it('in robust mode gives outliers weight near 0 and keeps them out of the trend', () => {
    const spiky = daily.slice();
    spiky[60] = spiky[60]! + 2000;
    const r = stl(spiky, { period: 7, sWindow: 7, robust: true });
    expect(r.weights[60]).toBe(0);
    expect(Math.abs(r.trend[60]! - stl(daily, { period: 7, sWindow: 7, robust: true }).trend[60]!)).toBeLessThan(10);
  });

  it('outerTolerance (faster mode, off by default) stops early and stays close to the full robust fit', () => {
    const full = stl(daily, { period: 7, sWindow: 7, robust: true });
    const quick = stl(daily, { period: 7, sWindow: 7, robust: true, outerTolerance: 0.01 });
    expect(quick.parameters.outerRun).toBeLessThan(15);
    const range = Math.max(...full.trend) - Math.min(...full.trend);
    for (let i = 0; i < daily.length; i++) expect(Math.abs(quick.trend[i]! - full.trend[i]!)).toBeLessThan(0.02 * range);
  });

  it('rejects bad input with a clear message', () => {
    expect(() => stl([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14], { period: 7, sWindow: 7 })).toThrow(/stl needs at least two full periods/);
    expect(() => stl(daily, { period: 1, sWindow: 7 })).toThrow(/period must be a whole number >= 2/);
    expect(() => stl(daily, { period: 7, sWindow: 0 })).toThrow(/sWindow must be a whole number/);
    expect(() => stl(daily, { period: 7, sWindow: 7, tDegree: 2 as 1 })).toThrow(/tDegree must be 0 or 1/);
    expect(() => stl(daily.map((v, i) => (i === 3 ? Infinity : v)), { period: 7, sWindow: 7 })).toThrow(/finite or NaN/);
    expect(() => stl(daily.map((v, i) => (i % 7 === 2 ? Number.NaN : v)), { period: 7, sWindow: 7 })).toThrow(/cycle position; position 2/);
    expect(() => stl(daily, { period: 7, sWindow: 7, userWeights: [1, 2] })).toThrow(/one entry per value/);
  });
});
