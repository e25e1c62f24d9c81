/**
 * STL: Seasonal-Trend decomposition procedure based on Loess.
 *
 * Citation: R. B. Cleveland, W. S. Cleveland, J. E. McRae and I. Terpenning
 * (1990), "STL: A Seasonal-Trend Decomposition Procedure Based on Loess",
 * Journal of Official Statistics 6(1):3-73. Parameters carry the paper's names
 * (n_p = period, n_s = sWindow, n_t = tWindow, n_l = lWindow, n_i = inner,
 * n_o = outer) and R's `stats::stl` defaults; results agree with R's `stl` (the
 * authors' Fortran) to rounding, within 1e-9 relative element by element on the
 * fixtures of test/fixtures/stl/runner.R. One deliberate difference: for an even
 * number of points R's robustness weights can use a value that is not the
 * median of |residuals| (its partial sort is asked for the two middle order
 * statistics in descending order, which it does not support); we use the true
 * median, as the paper specifies (see README.md).
 *
 * Inner loop (n_i passes): detrend; loess-smooth each cycle-subseries, extended
 * by one period at each end; low-pass the result (moving averages of length n_p,
 * n_p, 3, then loess with n_l); seasonal = smoothed cycle-subseries minus
 * low-pass; deseasonalise; loess with n_t for the trend. Outer loop (n_o passes):
 * robustness weights B(|r| / (6 median |r|)), bisquare B(u) = (1 - u^2)^2 for
 * |u| < 1, multiplied into every loess fit of the next inner loop.
 * `sWindow: 'periodic'` does what R does: n_s = 10 n + 1, degree 0, then each
 * cycle position's seasonal values are replaced by their mean.
 *
 * Missing and excluded points (an extension, not in R): NaN values are missing
 * days (no data: unknown). They and points given `userWeights` 0 take no part in
 * any fit, nor in the median of the robustness weights, but still receive a
 * fitted seasonal and trend (their expected value); a missing point's remainder
 * is NaN. A zero is a real observation and enters like any other value. With no
 * NaN and all user weights 1 the computation is R's.
 *
 * Complexity: O((n_i (n_o + 1)) n (n_s / s_jump + n_t / t_jump + n_l / l_jump))
 * time, O(n + n_p) memory. Work buffers are reused between calls of the same size
 * (no allocation inside the loops).
 *
 * Example:
 *   const y = Array.from({ length: 28 }, (_, t) => 10 + (t % 7 === 5 ? 4 : 0) + 0.1 * t);
 *   const { seasonal, trend, remainder } = stl(y, { period: 7, sWindow: 'periodic' });
 *   // seasonal repeats every 7 points; y[t] = seasonal[t] + trend[t] + remainder[t]
 */
import { loessEstimate, loessSmooth } from './loess.js';
import { medianNear } from './robust.js';

export interface StlOptions {
  /** n_p: number of observations per cycle (7 for daily data with a weekly cycle); at least 2. */
  period: number;
  /** n_s: span (in cycles) of the cycle-subseries smoother, or 'periodic' for a fixed seasonal pattern. */
  sWindow: number | 'periodic';
  /** Degree of the cycle-subseries loess (0 or 1). Default 0; forced to 0 when periodic. */
  sDegree?: 0 | 1;
  /** n_t: span of the trend loess. Default nextodd(ceil(1.5 n_p / (1 - 1.5 / n_s))). */
  tWindow?: number;
  /** Degree of the trend loess. Default 1. */
  tDegree?: 0 | 1;
  /** n_l: span of the low-pass loess. Default nextodd(n_p). */
  lWindow?: number;
  /** Degree of the low-pass loess. Default tDegree. */
  lDegree?: 0 | 1;
  /** Jumps of the three smoothers. Defaults ceil(window / 10). */
  sJump?: number;
  tJump?: number;
  lJump?: number;
  /** Use the outer robustness loop. Default false. */
  robust?: boolean;
  /** n_i: passes of the inner loop. Default 2, or 1 when robust. */
  inner?: number;
  /** n_o: passes of the outer loop. Default 0, or 15 when robust. */
  outer?: number;
  /**
   * Faster mode, off by default (R has no such option): stop the outer loop once
   * a pass changes every seasonal and trend value by less than this fraction of
   * that component's range; the rule of the `stlez` routine in the authors'
   * Fortran (R's src/library/stats/src/stl.f), which uses 0.01.
   */
  outerTolerance?: number;
  /** Per-point weights in [0, 1] multiplied into every loess fit; 0 leaves a point out of the fit. */
  userWeights?: ArrayLike<number>;
}

/** Parameters as used: spans widened to odd numbers >= 3 like the reference code (R's `win` reports them as given). */
export interface StlParameters {
  period: number;
  sWindow: number;
  periodic: boolean;
  sDegree: number;
  tWindow: number;
  tDegree: number;
  lWindow: number;
  lDegree: number;
  sJump: number;
  tJump: number;
  lJump: number;
  inner: number;
  outer: number;
  /** Outer passes actually run (less than `outer` only with outerTolerance). */
  outerRun: number;
}

export interface StlResult {
  seasonal: Float64Array;
  trend: Float64Array;
  /** y - seasonal - trend; NaN where y is missing. */
  remainder: Float64Array;
  /** Weights used in the last pass: robustness weights (as R's `weights`) times user weights; 0 for missing points. */
  weights: Float64Array;
  parameters: StlParameters;
}

/** R's nextodd() on a whole number: the next odd number at or above it. */
function nextOdd(x: number): number {
  return x % 2 === 0 ? x + 1 : x;
}

function checkWindow(name: string, v: number | undefined): void {
  if (v !== undefined && (!Number.isInteger(v) || v < 1)) {
    throw new Error(`stl ${name} must be a whole number >= 1, got ${v}`);
  }
}

function checkDegree(name: string, v: number | undefined): void {
  if (v !== undefined && v !== 0 && v !== 1) throw new Error(`stl ${name} must be 0 or 1, got ${v}`);
}

/** Resolves R's defaults (in R's order: jumps use the windows after defaults are applied). */
export function stlParameters(n: number, options: StlOptions): StlParameters {
  const { period } = options;
  if (!Number.isInteger(period) || period < 2) {
    throw new Error(`stl period must be a whole number >= 2 (observations per cycle), got ${period}`);
  }
  if (n <= 2 * period) {
    throw new Error(`stl needs at least two full periods: more than ${2 * period} points for period ${period}, got ${n}`);
  }
  const periodic = options.sWindow === 'periodic';
  if (!periodic && typeof options.sWindow !== 'number') {
    throw new Error(`stl sWindow must be a number or 'periodic', got ${String(options.sWindow)}`);
  }
  const sWindow = periodic ? 10 * n + 1 : (options.sWindow as number);
  checkWindow('sWindow', sWindow);
  for (const key of ['tWindow', 'lWindow', 'sJump', 'tJump', 'lJump'] as const) checkWindow(key, options[key]);
  for (const key of ['sDegree', 'tDegree', 'lDegree'] as const) checkDegree(key, options[key]);
  const sDegree = periodic ? 0 : (options.sDegree ?? 0);
  const tDegree = options.tDegree ?? 1;
  const lDegree = options.lDegree ?? tDegree;
  const tWindow = options.tWindow ?? nextOdd(Math.ceil((1.5 * period) / (1 - 1.5 / sWindow)));
  const lWindow = options.lWindow ?? nextOdd(period);
  const robust = options.robust ?? false;
  const inner = options.inner ?? (robust ? 1 : 2);
  const outer = options.outer ?? (robust ? 15 : 0);
  if (!Number.isInteger(inner) || inner < 1) throw new Error(`stl inner must be a whole number >= 1, got ${inner}`);
  if (!Number.isInteger(outer) || outer < 0) throw new Error(`stl outer must be a whole number >= 0, got ${outer}`);
  // The reference code widens every span to at least 3 and to the next odd number;
  // the jumps are computed from the spans as given, as R does.
  const odd = (w: number): number => nextOdd(Math.max(3, w));
  return {
    period,
    sWindow: odd(sWindow),
    periodic,
    sDegree,
    tWindow: odd(tWindow),
    tDegree,
    lWindow: odd(lWindow),
    lDegree,
    sJump: options.sJump ?? Math.ceil(sWindow / 10),
    tJump: options.tJump ?? Math.ceil(tWindow / 10),
    lJump: options.lJump ?? Math.ceil(lWindow / 10),
    inner,
    outer,
    outerRun: outer,
  };
}

/** Work buffers for one (n, period); reused across calls so batches of equal-length series allocate once. */
class Workspace {
  readonly y: Float64Array;
  readonly detrended: Float64Array;
  readonly cycle: Float64Array;
  readonly lowPass: Float64Array;
  readonly ma: Float64Array;
  readonly rw: Float64Array;
  readonly abs: Float64Array;
  readonly residual: Float64Array;
  readonly scratch: Float64Array;
  /** Median |residual| of the previous outer pass: a close guess for the next one. */
  previousMedian = 0;
  readonly prevSeasonal: Float64Array;
  readonly prevTrend: Float64Array;

  constructor(
    readonly n: number,
    readonly period: number,
  ) {
    this.y = new Float64Array(n);
    this.detrended = new Float64Array(n);
    this.cycle = new Float64Array(n + 2 * period);
    this.lowPass = new Float64Array(n + 2 * period);
    this.ma = new Float64Array(n + 2 * period);
    this.rw = new Float64Array(n);
    this.abs = new Float64Array(n);
    this.residual = new Float64Array(n);
    this.scratch = new Float64Array(n);
    this.prevSeasonal = new Float64Array(n);
    this.prevTrend = new Float64Array(n);
  }
}

let cached: Workspace | undefined;

function workspace(n: number, period: number): Workspace {
  if (cached === undefined || cached.n !== n || cached.period !== period) cached = new Workspace(n, period);
  return cached;
}

/** Moving average of length len over x[0..n-1] into ave[0..n-len], as a running sum. */
function movingAverage(x: Float64Array, n: number, len: number, ave: Float64Array): void {
  const inv = 1 / len;
  let v = 0;
  for (let i = 0; i < len; i++) v += x[i]!;
  ave[0] = v * inv;
  for (let j = 1; j <= n - len; j++) {
    v += x[j + len - 1]! - x[j - 1]!;
    ave[j] = v * inv;
  }
}

/**
 * Cycle-subseries smoothing: each subseries (every period-th point, smoothed in
 * place through a strided view) is loess smoothed and extrapolated one cycle at
 * each end, into cycle[0..n+2*period-1].
 */
function smoothCycleSubseries(ws: Workspace, p: StlParameters, rw: Float64Array | null): void {
  const { n, period, detrended, cycle } = ws;
  const { sWindow: ns, sDegree: deg, sJump: jump } = p;
  for (let j = 0; j < period; j++) {
    const k = Math.floor((n - 1 - j) / period) + 1;
    loessSmooth(detrended, j, period, k, ns, deg, jump, rw, cycle, period + j, period);
    const before = loessEstimate(detrended, j, period, k, ns, deg, -1, 0, Math.min(ns, k) - 1, rw);
    cycle[j] = Number.isNaN(before) ? cycle[period + j]! : before;
    const after = loessEstimate(detrended, j, period, k, ns, deg, k, Math.max(0, k - ns), k - 1, rw);
    cycle[(k + 1) * period + j] = Number.isNaN(after) ? cycle[k * period + j]! : after;
  }
}

/** One run of the inner loop (n_i passes), updating seasonal and trend in place. */
function innerLoop(ws: Workspace, p: StlParameters, rw: Float64Array | null, seasonal: Float64Array, trend: Float64Array): void {
  const { n, period, y, detrended, cycle, lowPass, ma } = ws;
  for (let pass = 0; pass < p.inner; pass++) {
    for (let i = 0; i < n; i++) detrended[i] = y[i]! - trend[i]!;
    smoothCycleSubseries(ws, p, rw);
    // Low-pass filter of the cycle-subseries: MA(n_p), MA(n_p), MA(3), then loess(n_l), unweighted.
    movingAverage(cycle, n + 2 * period, period, lowPass);
    movingAverage(lowPass, n + period + 1, period, ma);
    movingAverage(ma, n + 2, 3, lowPass);
    loessSmooth(lowPass, 0, 1, n, p.lWindow, p.lDegree, p.lJump, null, ma, 0, 1);
    // The buffer now takes the deseasonalised series, which the trend loess smooths.
    for (let i = 0; i < n; i++) {
      seasonal[i] = cycle[period + i]! - ma[i]!;
      detrended[i] = y[i]! - seasonal[i]!;
    }
    loessSmooth(detrended, 0, 1, n, p.tWindow, p.tDegree, p.tJump, rw, trend, 0, 1);
  }
}

/**
 * Bisquare robustness weights from the residuals of observed points, times the
 * user weights. Median of |r| over points with user weight > 0 only, so missing
 * and excluded points do not move the scale.
 */
function robustnessWeights(ws: Workspace, seasonal: Float64Array, trend: Float64Array, user: Float64Array | null): void {
  const { n, y, rw, abs, residual } = ws;
  let m = 0;
  for (let i = 0; i < n; i++) {
    const r = Math.abs(y[i]! - seasonal[i]! - trend[i]!);
    residual[i] = r;
    if (user === null || user[i]! > 0) abs[m++] = r;
  }
  const middle = medianNear(abs, m, ws.previousMedian, ws.scratch);
  ws.previousMedian = middle;
  const cmad = 6 * middle;
  const c9 = 0.999 * cmad;
  const c1 = 0.001 * cmad;
  const inv = 1 / cmad;
  for (let i = 0; i < n; i++) {
    const r = residual[i]!;
    const u = r * inv;
    const b = (1 - u * u) * (1 - u * u);
    const w = r <= c1 ? 1 : r <= c9 ? b : 0;
    rw[i] = user === null ? w : w * user[i]!;
  }
}

/** Largest change of a component between two passes, relative to its range (the `stlez` convergence measure). */
function relativeChange(before: Float64Array, after: Float64Array, n: number): number {
  let lo = before[0]!;
  let hi = lo;
  let change = 0;
  for (let i = 0; i < n; i++) {
    const b = before[i]!;
    if (b < lo) lo = b;
    if (b > hi) hi = b;
    const d = Math.abs(b - after[i]!);
    if (d > change) change = d;
  }
  return hi > lo ? change / (hi - lo) : change === 0 ? 0 : Number.POSITIVE_INFINITY;
}

/**
 * Prepares the values and user weights: missing values (NaN) get weight 0 and a
 * placeholder (linear interpolation between observed neighbours) that only the
 * reference code's fallback for an all-zero-weight window can ever read.
 */
function prepare(values: ArrayLike<number>, options: StlOptions, ws: Workspace): Float64Array | null {
  const { n, period, y } = ws;
  const given = options.userWeights;
  if (given !== undefined && given.length !== n) {
    throw new Error(`stl userWeights must have one entry per value (${n}), got ${given.length}`);
  }
  let user: Float64Array | null = null;
  for (let i = 0; i < n; i++) {
    const v = values[i]!;
    const w = given === undefined ? 1 : given[i]!;
    if (!(w >= 0 && w <= 1)) throw new Error(`stl userWeights must lie in [0, 1]; weight ${i} is ${w}`);
    if (!Number.isFinite(v) && !Number.isNaN(v)) {
      throw new Error(`stl values must be finite or NaN (missing); value ${i} is ${v}`);
    }
    const weight = Number.isNaN(v) ? 0 : w;
    if (weight !== 1 && user === null) user = new Float64Array(n).fill(1);
    if (user !== null) user[i] = weight;
    y[i] = v;
  }
  if (user === null) return null;
  for (let j = 0; j < period; j++) {
    let any = false;
    for (let i = j; i < n && !any; i += period) any = user[i]! > 0;
    if (!any) {
      throw new Error(
        `stl needs at least one observed value at each cycle position; position ${j} (every ${period}th value from index ${j}) is all missing or weight 0`,
      );
    }
  }
  fillMissing(y, n);
  return user;
}

function fillMissing(y: Float64Array, n: number): void {
  let prev = -1;
  for (let i = 0; i < n; i++) {
    if (Number.isNaN(y[i]!)) continue;
    for (let g = prev + 1; g < i; g++) {
      y[g] = prev < 0 ? y[i]! : y[prev]! + ((y[i]! - y[prev]!) * (g - prev)) / (i - prev);
    }
    prev = i;
  }
  for (let g = prev + 1; g < n; g++) y[g] = y[prev]!;
}

/** STL decomposition of an equally spaced series. See the file comment for the method and missing values. */
export function stl(values: ArrayLike<number>, options: StlOptions): StlResult {
  const n = values.length;
  const p = stlParameters(n, options);
  if (options.outerTolerance !== undefined && !(options.outerTolerance > 0)) {
    throw new Error(`stl outerTolerance must be > 0, got ${options.outerTolerance}`);
  }
  const ws = workspace(n, p.period);
  const user = prepare(values, options, ws);
  ws.previousMedian = 0;
  const seasonal = new Float64Array(n);
  const trend = new Float64Array(n);
  const { rw, prevSeasonal, prevTrend } = ws;

  innerLoop(ws, p, user, seasonal, trend);
  let outerRun = 0;
  while (outerRun < p.outer) {
    robustnessWeights(ws, seasonal, trend, user);
    if (options.outerTolerance !== undefined) {
      prevSeasonal.set(seasonal);
      prevTrend.set(trend);
    }
    innerLoop(ws, p, rw, seasonal, trend);
    outerRun++;
    if (
      options.outerTolerance !== undefined &&
      relativeChange(prevSeasonal, seasonal, n) < options.outerTolerance &&
      relativeChange(prevTrend, trend, n) < options.outerTolerance
    ) {
      break;
    }
  }
  const weights = outerRun > 0 ? Float64Array.from(rw) : user !== null ? Float64Array.from(user) : new Float64Array(n).fill(1);

  if (p.periodic) {
    // As R: replace each cycle position's seasonal values by their mean.
    for (let j = 0; j < p.period; j++) {
      let sum = 0;
      let count = 0;
      for (let i = j; i < n; i += p.period) {
        sum += seasonal[i]!;
        count++;
      }
      const mean = sum / count;
      for (let i = j; i < n; i += p.period) seasonal[i] = mean;
    }
  }
  const remainder = new Float64Array(n);
  for (let i = 0; i < n; i++) remainder[i] = values[i]! - seasonal[i]! - trend[i]!;
  return { seasonal, trend, remainder, weights, parameters: { ...p, outerRun } };
}
