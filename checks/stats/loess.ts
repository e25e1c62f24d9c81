/**
 * Loess: locally weighted regression with tricube weights, local degree 0 or 1,
 * and the jump-and-interpolate speed-up used by STL.
 *
 * Citation: W. S. Cleveland (1979), "Robust Locally Weighted Regression and
 * Smoothing Scatterplots", JASA 74(368):829-836; the variant used here is the one
 * specified for STL in R. B. Cleveland, W. S. Cleveland, J. E. McRae and
 * I. Terpenning (1990), "STL: A Seasonal-Trend Decomposition Procedure Based on
 * Loess", Journal of Official Statistics 6(1):3-73, section 2 and appendix, as
 * implemented in R's `stats::stl` (equally spaced x = 1..n, span given as a
 * number of points q, neighbourhood weights tricube(|x - x_i| / h) where h is the
 * distance to the farthest of the q nearest points, enlarged by (q - n) / 2 when
 * q > n; fits that get no weight fall back to the observation itself).
 *
 * Complexity: O(n q / jump) time for n points and span q, O(1) extra memory
 * (the smoother writes into a caller's buffer; tricube weights come from a
 * cached table per bandwidth). The hot-path functions read a strided view (the
 * j-th value at y[base + j * stride]) so STL can smooth each cycle-subseries in
 * place.
 *
 * Example:
 *   loess([1, 2, 8, 4, 5, 6, 7], { span: 5, degree: 1 })
 *   // Float64Array [0.8178, 3.1692, 5.1369, 5.4316, 5, 6, 7] (rounded): at each
 *   // point a tricube-weighted line through its five nearest neighbours.
 */

/** Tricube tables are cached for bandwidths up to this many points; wider ones are computed on the fly. */
const MAX_CACHED_BANDWIDTH = 4096;
const tricubeRows: (Float64Array | undefined)[] = [];

/** Tricube weight of a point at integer distance r for bandwidth h, with the 0.001/0.999 cut-offs of the STL code. */
function tricube(r: number, h: number): number {
  if (r > 0.999 * h) return 0;
  if (r <= 0.001 * h) return 1;
  const u = r / h;
  const v = 1 - u * u * u;
  return v * v * v;
}

/** Weights tricube(r, h) for r = 0..h; distances in STL are integers, so one row per bandwidth serves every fit. */
function tricubeRow(h: number): Float64Array {
  let row = tricubeRows[h];
  if (row === undefined) {
    row = new Float64Array(h + 1);
    for (let r = 0; r <= h; r++) row[r] = tricube(r, h);
    tricubeRows[h] = row;
  }
  return row;
}

let onesBuffer = new Float64Array(0);

/** All-ones weights: multiplying by 1 is exact, so unweighted fits share the weighted code. */
function ones(size: number): Float64Array {
  if (onesBuffer.length < size) onesBuffer = new Float64Array(size).fill(1);
  return onesBuffer;
}

/**
 * Local fit at position xs (0-based, may lie outside 0..n-1) from the points
 * nleft..nright of the view (y, base, stride), with span `len` and local degree
 * `degree`. Robustness or user weights `rw` (indexed like y) multiply the
 * neighbourhood weights (null: all 1). Returns NaN when every point in the
 * window has weight 0 (the caller decides the fallback, as the STL code does).
 *
 * One pass accumulates the weighted moments; the degree-1 fit is then the
 * weighted mean plus the slope correction of Cleveland et al. (1990, appendix),
 * skipped (left at degree 0) when the positions are too concentrated to carry a
 * slope, exactly as the reference implementation does.
 */
export function loessEstimate(
  y: Float64Array,
  base: number,
  stride: number,
  n: number,
  len: number,
  degree: number,
  xs: number,
  nleft: number,
  nright: number,
  rw: Float64Array | null,
): number {
  let h = Math.max(xs - nleft, nright - xs);
  if (len > n) h += Math.floor((len - n) / 2);
  const row = h <= MAX_CACHED_BANDWIDTH ? tricubeRow(h) : undefined;
  const w = rw ?? ones(base + n * stride);
  let s0 = 0;
  let sy = 0;
  if (degree === 0 || h === 0) {
    for (let j = nleft, p = base + nleft * stride; j <= nright; j++, p += stride) {
      const r = j < xs ? xs - j : j - xs;
      const k = (row !== undefined ? row[r]! : tricube(r, h)) * w[p]!;
      s0 += k;
      sy += k * y[p]!;
    }
    return s0 > 0 ? sy / s0 : Number.NaN;
  }
  let s1 = 0;
  let s2 = 0;
  let sdy = 0;
  for (let j = nleft, p = base + nleft * stride; j <= nright; j++, p += stride) {
    const d = j - xs;
    const k = (row !== undefined ? row[d < 0 ? -d : d]! : tricube(d < 0 ? -d : d, h)) * w[p]!;
    const ky = k * y[p]!;
    s0 += k;
    sy += ky;
    s1 += k * d;
    s2 += k * d * d;
    sdy += ky * d;
  }
  if (!(s0 > 0)) return Number.NaN;
  const fit = sy / s0;
  const mean = s1 / s0;
  const spread = s2 / s0 - mean * mean;
  if (!(Math.sqrt(spread) > 0.001 * (n - 1))) return fit;
  return fit + (-mean / spread) * (sdy / s0 - mean * fit);
}

/**
 * Interior fits (odd span, full window centred on the point) all share one
 * bandwidth and the same distances -m..m, so the tricube weights t_d, t_d d and
 * t_d d^2 are tabulated once per smoother call, and the symmetric pairs +d/-d are
 * summed together (half the multiplications). Without extra weights the fit is
 * a fixed symmetric kernel (the slope term vanishes by symmetry).
 */
let kernel0 = new Float64Array(0);
let kernel1 = new Float64Array(0);
let kernel2 = new Float64Array(0);
let kernelDirect = new Float64Array(0);
/** rw * y at the view's positions, for the weighted interior fits. */
let weightedBuffer = new Float64Array(0);

let preparedHalfWidth = -1;

function prepareKernel(m: number): void {
  // The kernels depend on the half-width only; STL asks for the same few again and again.
  if (m === preparedHalfWidth) return;
  preparedHalfWidth = m;
  if (kernel0.length < m + 1) {
    kernel0 = new Float64Array(m + 1);
    kernel1 = new Float64Array(m + 1);
    kernel2 = new Float64Array(m + 1);
    kernelDirect = new Float64Array(m + 1);
  }
  const row = tricubeRow(m);
  let total = row[0]!;
  for (let d = 1; d <= m; d++) total += 2 * row[d]!;
  for (let d = 0; d <= m; d++) {
    const t = row[d]!;
    kernel0[d] = t;
    kernel1[d] = t * d;
    kernel2[d] = t * d * d;
    kernelDirect[d] = t / total;
  }
}

/** Interior fits at i = from, from+step, ..., to of an unweighted view. */
function interiorDirect(
  y: Float64Array,
  base: number,
  stride: number,
  m: number,
  from: number,
  to: number,
  step: number,
  out: Float64Array,
  outBase: number,
  outStride: number,
): void {
  const c = kernelDirect;
  for (let i = from; i <= to; i += step) {
    const p = base + i * stride;
    let v = c[0]! * y[p]!;
    for (let d = 1, q = stride; d <= m; d++, q += stride) v += c[d]! * (y[p - q]! + y[p + q]!);
    out[outBase + i * outStride] = v;
  }
}

/** Weighted interior fits of degree 0; the observation itself when the window has no weight. */
function interiorConstant(
  y: Float64Array,
  rw: Float64Array,
  base: number,
  stride: number,
  m: number,
  from: number,
  to: number,
  step: number,
  out: Float64Array,
  outBase: number,
  outStride: number,
): void {
  const t = kernel0;
  const wy = weightedBuffer;
  for (let i = from; i <= to; i += step) {
    const p = base + i * stride;
    let s0 = t[0]! * rw[p]!;
    let sy = t[0]! * wy[p]!;
    for (let d = 1, q = stride; d <= m; d++, q += stride) {
      s0 += t[d]! * (rw[p - q]! + rw[p + q]!);
      sy += t[d]! * (wy[p - q]! + wy[p + q]!);
    }
    out[outBase + i * outStride] = s0 > 0 ? sy / s0 : y[p]!;
  }
}

/** Weighted interior fits of degree 1 (the slope correction of loessEstimate, distances d = j - i). */
function interiorLine(
  y: Float64Array,
  rw: Float64Array,
  base: number,
  stride: number,
  n: number,
  m: number,
  from: number,
  to: number,
  step: number,
  out: Float64Array,
  outBase: number,
  outStride: number,
): void {
  const a = kernel0;
  const b = kernel1;
  const c = kernel2;
  const wy = weightedBuffer;
  const minSpread = 0.001 * (n - 1);
  for (let i = from; i <= to; i += step) {
    const p = base + i * stride;
    let s0 = a[0]! * rw[p]!;
    let sy = a[0]! * wy[p]!;
    let s1 = 0;
    let s2 = 0;
    let sdy = 0;
    for (let d = 1, q = stride; d <= m; d++, q += stride) {
      const wl = rw[p - q]!;
      const wr = rw[p + q]!;
      const vl = wy[p - q]!;
      const vr = wy[p + q]!;
      s0 += a[d]! * (wl + wr);
      s1 += b[d]! * (wr - wl);
      s2 += c[d]! * (wl + wr);
      sy += a[d]! * (vl + vr);
      sdy += b[d]! * (vr - vl);
    }
    const o = outBase + i * outStride;
    if (!(s0 > 0)) {
      out[o] = y[p]!;
      continue;
    }
    const fit = sy / s0;
    const mean = s1 / s0;
    const spread = s2 / s0 - mean * mean;
    out[o] = m === 0 || !(Math.sqrt(spread) > minSpread) ? fit : fit + (-mean / spread) * (sdy / s0 - mean * fit);
  }
}

/** A fit with the general routine; the observation where the window has no weight, as in the reference code. */
function boundaryFit(
  y: Float64Array,
  base: number,
  stride: number,
  n: number,
  len: number,
  degree: number,
  i: number,
  nleft: number,
  nright: number,
  rw: Float64Array | null,
  out: Float64Array,
  outBase: number,
  outStride: number,
): void {
  const v = loessEstimate(y, base, stride, n, len, degree, i, nleft, nright, rw);
  out[outBase + i * outStride] = Number.isNaN(v) ? y[base + i * stride]! : v;
}

/**
 * Loess smoothing of the n values of the view (y, base, stride) into the view
 * (out, outBase, outStride): fits at every `jump`-th point (and the last),
 * linear interpolation in between. Windows and fallbacks follow the STL
 * reference implementation so results match R's `stl`: a point's window is the
 * `len` nearest points, i.e. [0, len-1] near the start, [n-len, n-1] near the
 * end, centred in between; a window with no weight gives the observation.
 * Hot path: no validation, no allocation once buffers have grown.
 */
export function loessSmooth(
  y: Float64Array,
  base: number,
  stride: number,
  n: number,
  len: number,
  degree: number,
  jump: number,
  rw: Float64Array | null,
  out: Float64Array,
  outBase: number,
  outStride: number,
): void {
  if (n < 2) {
    out[outBase] = y[base]!;
    return;
  }
  const nj = Math.min(jump, n - 1);
  const last = Math.floor((n - 1) / nj) * nj;
  if (len >= n) {
    for (let i = 0; i <= last; i += nj) boundaryFit(y, base, stride, n, len, degree, i, 0, n - 1, rw, out, outBase, outStride);
    if (last !== n - 1) boundaryFit(y, base, stride, n, len, degree, n - 1, 0, n - 1, rw, out, outBase, outStride);
  } else {
    // Fitted point's offset in an interior window (the centre for odd spans).
    const centre = ((len + 1) >> 1) - 1;
    const lastInterior = n - len + centre;
    let i = 0;
    for (; i < centre && i <= last; i += nj) boundaryFit(y, base, stride, n, len, degree, i, 0, len - 1, rw, out, outBase, outStride);
    const to = Math.min(lastInterior, last);
    if (i <= to && len % 2 === 1) {
      // Odd spans (all of STL's) take the tabulated symmetric path.
      prepareKernel(centre);
      if (rw === null) interiorDirect(y, base, stride, centre, i, to, nj, out, outBase, outStride);
      else {
        if (weightedBuffer.length < base + n * stride) weightedBuffer = new Float64Array(base + n * stride);
        const wy = weightedBuffer;
        for (let j = 0, p = base; j < n; j++, p += stride) wy[p] = rw[p]! * y[p]!;
        if (degree === 0) interiorConstant(y, rw, base, stride, centre, i, to, nj, out, outBase, outStride);
        else interiorLine(y, rw, base, stride, n, centre, i, to, nj, out, outBase, outStride);
      }
      i += Math.floor((to - i) / nj) * nj + nj;
    }
    for (; i <= to; i += nj) boundaryFit(y, base, stride, n, len, degree, i, i - centre, i - centre + len - 1, rw, out, outBase, outStride);
    for (; i <= last; i += nj) boundaryFit(y, base, stride, n, len, degree, i, n - len, n - 1, rw, out, outBase, outStride);
    if (last !== n - 1) {
      // The last point is fitted with the window of the last jump, as in the reference code.
      const nleft = last < centre ? 0 : last <= lastInterior ? last - centre : n - len;
      boundaryFit(y, base, stride, n, len, degree, n - 1, nleft, nleft + len - 1, rw, out, outBase, outStride);
    }
  }
  if (nj === 1) return;
  for (let i = 0; i < n - nj; i += nj) {
    const a = out[outBase + i * outStride]!;
    const delta = (out[outBase + (i + nj) * outStride]! - a) / nj;
    for (let j = i + 1; j < i + nj; j++) out[outBase + j * outStride] = a + delta * (j - i);
  }
  if (last === n - 1) return;
  const a = out[outBase + last * outStride]!;
  const delta = (out[outBase + (n - 1) * outStride]! - a) / (n - 1 - last);
  for (let j = last + 1; j < n - 1; j++) out[outBase + j * outStride] = a + delta * (j - last);
}

export interface LoessOptions {
  /** Number of points in each local fit (q); at least 1. Spans larger than n widen the bandwidth as in STL. */
  span: number;
  /** Local polynomial degree: 0 (weighted mean) or 1 (weighted line). Default 1. */
  degree?: 0 | 1;
  /** Fit every `jump`-th point and interpolate linearly in between. Default 1 (fit everywhere). */
  jump?: number;
  /** Non-negative weights multiplied into the tricube weights (robustness or user weights). */
  weights?: ArrayLike<number>;
}

/** Loess smooth of equally spaced values; returns a new array. Validates its inputs. */
export function loess(values: ArrayLike<number>, options: LoessOptions): Float64Array {
  const n = values.length;
  const { span, degree = 1, jump = 1, weights } = options;
  if (n < 1) throw new Error('loess needs at least one value');
  if (!Number.isInteger(span) || span < 1) throw new Error(`loess span must be a whole number of points >= 1, got ${span}`);
  if (degree !== 0 && degree !== 1) throw new Error(`loess degree must be 0 or 1, got ${String(degree)}`);
  if (!Number.isInteger(jump) || jump < 1) throw new Error(`loess jump must be a whole number >= 1, got ${jump}`);
  const y = Float64Array.from(values);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(y[i]!)) throw new Error(`loess needs finite values; value ${i} is ${y[i]}`);
  }
  let rw: Float64Array | null = null;
  if (weights !== undefined) {
    if (weights.length !== n) throw new Error(`loess weights must have one entry per value (${n}), got ${weights.length}`);
    rw = Float64Array.from(weights);
    for (let i = 0; i < n; i++) {
      const w = rw[i]!;
      if (!(w >= 0) || !Number.isFinite(w)) throw new Error(`loess weights must be finite and >= 0; weight ${i} is ${w}`);
    }
  }
  const out = new Float64Array(n);
  loessSmooth(y, 0, 1, n, span, degree, jump, rw, out, 0, 1);
  return out;
}
