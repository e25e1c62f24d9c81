/**
 * Seasonal detector: judges the latest day of a daily series against a
 * forecast from its own past (no look-ahead): its weekday's seasonal plus a
 * local level. This is the entry point the `seasonal` check calls.
 *
 * Citation: the seasonal ESD (S-ESD) of J. Hochenbaum, O. S. Vallis and
 * A. Kejariwal (2017), "Automatic Anomaly Detection in the Cloud Via
 * Statistical Learning", arXiv:1704.07706, applied to a trailing window that
 * ends on the judged day: robust STL (R. B. Cleveland, W. S. Cleveland, J. E.
 * McRae and I. Terpenning 1990, J. Official Statistics 6(1):3-73) with a
 * periodic seasonal, then Rosner's generalized ESD test (Technometrics
 * 25(2):165-172, 1983). The level departs from the paper's: a local level (a
 * deseasonalised median of the last two weeks, the seasonal-naive idea of R.
 * J. Hyndman and G. Athanasopoulos 2021, "Forecasting: Principles and
 * Practice", 3rd ed., sections 3.4 and 5.2, made robust) instead of the
 * median of the whole window, and the judged day is scored out of sample.
 *
 * Method for the latest day D:
 * 1. Window: the `historyDays` days before D (the history), and D. Missing
 *    days (NaN: no rows) take no part at all. Days in `excluded` (e.g. already
 *    judged anomalous) are kept out of the baseline (the STL fit and every
 *    local level) but keep a residual in the ESD's sample as what they are,
 *    past anomalies, which the test removes first.
 * 2. With at least `minStlDays` usable history days (default 28: four full
 *    weeks; R's `stl` refuses fewer than two periods, and four give each
 *    weekday's cycle-subseries four points to be robust with; common practice,
 *    this is the switch point): robust STL with a periodic seasonal on the
 *    history only; D takes its weekday's seasonal. Each day's local level is
 *    the median of the deseasonalised values of the `levelDays` (14) usable
 *    days before it (at least half of them, else the day has no residual);
 *    residual = value - seasonal - local level, for the history days and for
 *    D alike, so every residual is a one-step-ahead forecast error. A linear
 *    trend then shifts every residual by the same lag (about a week's growth),
 *    which the ESD's centre absorbs: neither a rising nor a falling series
 *    hides a drop or a spike, and the expected value does not lag. Method
 *    'stl-esd'. With less history, the forecast is the median of the same
 *    weekday over the last 4 weeks (`weekday-baseline.ts`), each history day
 *    measured against its own earlier weeks the same way: method
 *    'weekday-median'. With fewer than 2 earlier same-weekday values for D, or
 *    fewer than 7 history residuals, nothing is judged: 'insufficient-history'.
 * 3. Out of sample, D's error is wider than a history residual: a history day
 *    helped fit its own weekday's seasonal (one of k values: variance about
 *    1 - 1/k of the noise's), D did not (1 + 1/k); both carry the local
 *    level's error, about pi / (2 m) for a median of m values. D's deviation
 *    from the median history residual is divided by the ratio of the two
 *    standard deviations, sqrt((1 + 1/k + pi/2m) / (1 - 1/k + pi/2m)) (about
 *    1.08 with 12 weeks), before it joins the ESD's sample. Simulated (test)
 *    this puts D's false-alarm rate at that of an exchangeable day; scored
 *    in-sample, as the paper does, D was flagged about 2.5 times as often.
 * 4. The generalized ESD (at most k = 10% of the sample, level alpha) runs on
 *    the residuals; D is anomalous when it is among the outliers found. Score,
 *    band and critical value are those of the ESD step at which D was
 *    examined (after the more extreme points were removed): score =
 *    (residual - center) / scale in the sample's units; `expected` is the
 *    value D was compared with (forecast + centre, on D's footing) and the
 *    band expected +- critical x scale, `scale` widened for D. Two
 *    consequences of the sequential test, both intended: a day just outside
 *    the band is not flagged when more than k of the window is already more
 *    extreme (a long run of "anomalies" is a changed series and stops
 *    paging); and a day can be flagged just inside its band when a later step
 *    confirms several outliers together (Rosner's rule).
 *
 * Scale: `transform: 'log1p'` judges log(1 + x) instead of x (counts, whose
 * weekly pattern and noise are multiplicative: a weekend at a third of a
 * weekday has a third of its spread, not the same). Observed, expected and the
 * band come back in the series' units (the band is then asymmetric); score and
 * scale stay on the log scale.
 *
 * Mean and standard deviation by default (S-ESD), not median and MAD (the
 * paper's S-H-ESD, `robust: true`): with Student-t critical values the MAD
 * version is not at its nominal level. Simulated on normal samples
 * (test/stats/seasonal-detector.test.ts) it declares some outlier in 14% of
 * windows of 85 and 27% of windows of 30 at alpha 0.05, against 5% for the
 * mean and standard deviation, whose sequential removal already protects
 * against masking by up to k outliers (Rosner 1983).
 *
 * Defaults, chosen for an on-call analyst who must trust every page:
 * - alpha 0.05 (Rosner's and the NIST handbook's level). The ESD bounds the
 *   chance of any false outlier in the whole window, so a normal day is flagged
 *   with probability of the order of alpha / window size (0.06% for a window of
 *   85). The check's `sensitivity` maps to alpha.
 * - k = 0.1: at most one day in ten of the window may be anomalous (a holiday
 *   week plus a bad release fit; more than that is a regime change).
 * - 12 weeks of history: a stable weekly profile and scale. A periodic
 *   seasonal (one weekly profile per window) has the lowest false-alarm rate
 *   of the spans tried; the profile still follows changes as the window moves.
 * - 14 level days: two of each weekday, so the level is balanced across the
 *   week and follows a trend within a week, at an error variance of about a
 *   tenth of the noise's (a median of 7 doubles that, of 28 lags twice as far).
 * The NYC taxi test (test/stats/seasonal-detector.test.ts) checks these on
 * labelled real data.
 *
 * Zero scale: a window whose residuals are all equal (e.g. a count stuck at 0)
 * has no spread and nothing is flagged; a D that departs from such a history
 * is flagged (the ESD statistic of one value against identical others is the
 * largest possible). Residuals within 1e-9 of the series' size are rounding
 * noise of the decomposition and count as 0.
 *
 * Complexity: O(W) for the STL, O(W m log m) for the levels and O(k W^2) for
 * the ESD, W the window length; about a millisecond for 12 weeks.
 *
 * Example (a completion rate in %, eight weeks of history, then a bad Monday;
 * R's stl, median, sd and qt give the same to 1e-5, test/fixtures/seasonal-esd):
 *   const profile = [55, 58, 59, 60, 57, 48, 45];
 *   const rates = Array.from({ length: 56 }, (_, t) => profile[t % 7]! + ((t * 7) % 5) * 0.4);
 *   judgeLatest([...rates, 41])
 *   // { method: 'stl-esd', observed: 41, expected: 55.47, low: 48.60, high: 62.33,
 *   //   score: -6.59, direction: 'below', anomalous: true, critical: 3.13, ... }
 */
import type { Alternative } from './generalized-esd.js';
import { esdCriticalValue, generalizedEsd } from './generalized-esd.js';
import { median, robustLocationScale } from './robust.js';
import { stl } from './stl.js';
import { weekdayBaseline } from './weekday-baseline.js';

export const SEASONAL_DEFAULTS = {
  period: 7,
  alpha: 0.05,
  maxAnomalies: 0.1,
  alternative: 'two-sided' as Alternative,
  historyDays: 84,
  minStlDays: 28,
  baselineWeeks: 4,
  sWindow: 'periodic' as number | 'periodic',
  robust: false,
  levelDays: 14,
  transform: 'none' as SeasonalTransform,
};

/** Scale the series is judged on: as given, or log(1 + x) for counts (see the file comment). */
export type SeasonalTransform = 'none' | 'log1p';

/** Fewest history residuals the weekday-median method needs (one week). */
const MIN_BASELINE_RESIDUALS = 7;
/** Fewest earlier same-weekday values the weekday-median method needs for D. */
const MIN_SAME_WEEKDAY = 2;

export interface SeasonalOptions {
  /** Observations per cycle. Default 7. */
  period?: number;
  /** Significance level of the ESD (the check's `sensitivity`). Default 0.05. */
  alpha?: number;
  /** k: the largest fraction of the window that may be anomalous, at most 0.49. Default 0.1. */
  maxAnomalies?: number;
  /** 'two-sided' (default), 'greater' (only spikes) or 'less' (only drops). */
  alternative?: Alternative;
  /** Days of history before the judged day. Default 84 (12 weeks). */
  historyDays?: number;
  /** Usable history days needed for STL; fewer use the weekday median. Default 28. */
  minStlDays?: number;
  /** Weeks the weekday median looks back. Default 4. */
  baselineWeeks?: number;
  /** STL seasonal span. Default 'periodic' (one weekly profile over the window, as in the paper). */
  sWindow?: number | 'periodic';
  /** Median and MAD in the ESD (the paper's S-H-ESD) instead of mean and standard deviation (S-ESD). Default false: see the file comment. */
  robust?: boolean;
  /** Usable days before a day whose deseasonalised median is its local level. Default 14. */
  levelDays?: number;
  /** 'log1p' judges log(1 + x) (counts: multiplicative weekly pattern and noise); 'none' (default) the values as given. */
  transform?: SeasonalTransform;
  /** Days kept out of the baseline (true), e.g. days already judged anomalous. One entry per value. */
  excluded?: ArrayLike<boolean>;
}

export type SeasonalMethod = 'stl-esd' | 'weekday-median' | 'insufficient-history';

export interface SeasonalJudgement {
  method: SeasonalMethod;
  observed: number;
  /** Expected value of the latest day (NaN when nothing was judged). */
  expected: number;
  /** Band at the ESD step where the day was examined (see the file comment). */
  low: number;
  high: number;
  /** Score: (residual - center) / scale at that step, in standard deviations (robust units with `robust`). */
  score: number;
  direction: 'above' | 'below' | 'none';
  anomalous: boolean;
  /** The ESD critical value at that step. */
  critical: number;
  /** Scale of the residuals at that step, in the series' units. */
  scale: number;
  /** Usable history days the baseline was built from. */
  historyUsed: number;
}

function notJudged(observed: number, historyUsed: number): SeasonalJudgement {
  return {
    method: 'insufficient-history',
    observed,
    expected: Number.NaN,
    low: Number.NaN,
    high: Number.NaN,
    score: 0,
    direction: 'none',
    anomalous: false,
    critical: Number.NaN,
    scale: Number.NaN,
    historyUsed,
  };
}

/** Location and scale as the ESD computes them: mean and sample standard deviation, or median and robust scale. */
function locationScale(values: number[], robust: boolean): { center: number; scale: number } {
  if (robust) return robustLocationScale(values);
  const center = values.reduce((a, b) => a + b, 0) / values.length;
  const ss = values.reduce((a, b) => a + (b - center) ** 2, 0);
  return { center, scale: Math.sqrt(ss / (values.length - 1)) };
}

/** The judged day's out-of-sample error, made comparable with the history residuals (see the file comment, step 3). */
interface Forecast {
  /** Forecast of the judged day before the ESD's centre: seasonal + local level (weekday median). */
  value: number;
  /** Observed minus forecast. */
  residual: number;
  /** Sd of the judged day's error over the sd of a history residual, >= 1. */
  widening: number;
}

/**
 * Runs the ESD on the history residuals plus the judged day's error shrunk
 * by the forecast widening about the history's median residual, and reads off
 * the judged day's verdict, and the center, scale and critical value of the
 * step at which it was examined (the step after the quota when it was never
 * reached). Expected value, band and scale are given back on the series' own
 * footing (the judged day's, widened).
 */
function decide(method: SeasonalMethod, raw: number, observed: number, forecast: Forecast, history: number[], historyUsed: number, o: ResolvedOptions): SeasonalJudgement {
  const pivot = median(history);
  const residuals = [...history, pivot + (forecast.residual - pivot) / forecast.widening];
  const m = residuals.length;
  const latest = m - 1;
  const maxOutliers = Math.min(m - 2, Math.max(1, Math.floor(o.maxAnomalies * m)));
  const esd = generalizedEsd(residuals, { maxOutliers, alpha: o.alpha, alternative: o.alternative, robust: o.robust });
  const step = esd.steps.find((s) => s.index === latest);
  let center: number;
  let scale: number;
  let critical: number;
  if (step !== undefined) {
    ({ center, scale, critical } = step);
  } else {
    const removed = new Set(esd.steps.map((s) => s.index));
    ({ center, scale } = locationScale(residuals.filter((_, i) => !removed.has(i)), o.robust));
    const next = esd.steps.length + 1;
    critical = m - next - 1 >= 1 ? esdCriticalValue(m, next, o.alpha, o.alternative) : esd.steps[esd.steps.length - 1]!.critical;
  }
  const anomalous = esd.outliers.includes(latest);
  const deviation = residuals[latest]! - center;
  const score = scale > 0 ? deviation / scale : deviation === 0 ? 0 : deviation > 0 ? Infinity : -Infinity;
  // On the judged day's own footing: the centre it was compared with and its widened scale.
  const expected = forecast.value + pivot + forecast.widening * (center - pivot);
  const dayScale = forecast.widening * scale;
  const back = o.transform === 'log1p' ? Math.expm1 : (x: number) => x;
  return {
    method,
    observed: raw,
    expected: back(expected),
    low: o.alternative === 'greater' ? -Infinity : back(expected - critical * dayScale),
    high: o.alternative === 'less' ? Infinity : back(expected + critical * dayScale),
    score,
    direction: anomalous ? (score > 0 ? 'above' : 'below') : 'none',
    anomalous,
    critical,
    scale: dayScale,
    historyUsed,
  };
}

type ResolvedOptions = typeof SEASONAL_DEFAULTS;

function resolveOptions(options: SeasonalOptions, n: number): ResolvedOptions {
  const o = { ...SEASONAL_DEFAULTS, ...options };
  for (const key of ['period', 'historyDays', 'minStlDays', 'baselineWeeks', 'levelDays'] as const) {
    if (!Number.isInteger(o[key]) || o[key] < 1) throw new Error(`judgeLatest ${key} must be a whole number >= 1, got ${o[key]}`);
  }
  if (o.minStlDays <= 2 * o.period) {
    throw new Error(`judgeLatest minStlDays must exceed two periods (${2 * o.period}) for STL, got ${o.minStlDays}`);
  }
  if (!(o.alpha > 0 && o.alpha < 1)) throw new Error(`judgeLatest alpha must lie strictly between 0 and 1, got ${o.alpha}`);
  if (!(o.maxAnomalies > 0 && o.maxAnomalies <= 0.49)) {
    throw new Error(`judgeLatest maxAnomalies is a fraction of the window, above 0 and at most 0.49; got ${o.maxAnomalies}`);
  }
  if (o.transform !== 'none' && o.transform !== 'log1p') throw new Error(`judgeLatest transform must be 'none' or 'log1p', got ${String(o.transform)}`);
  if (options.excluded !== undefined && options.excluded.length !== n) {
    throw new Error(`judgeLatest excluded must have one entry per value (${n}), got ${options.excluded.length}`);
  }
  return o;
}

/**
 * Median of the deseasonalised usable values among the `levelDays` usable days
 * before `index` (the local level), and how many it took; NaN with fewer than
 * half of `levelDays`.
 */
function localLevel(deseasonalised: Float64Array, weights: Float64Array, index: number, levelDays: number): { level: number; used: number } {
  const picked: number[] = [];
  for (let j = index - 1; j >= 0 && picked.length < levelDays; j--) if (weights[j]! > 0) picked.push(deseasonalised[j]!);
  if (picked.length * 2 < levelDays) return { level: Number.NaN, used: picked.length };
  return { level: median(picked), used: picked.length };
}

/**
 * Judges the last value of `values` (daily, oldest first) within its trailing
 * window (see the file comment); nothing after it is used. Missing days are NaN;
 * zeros are observations. The last value must be an observation (a day with no
 * rows is a freshness or volume matter, not judged here) and is judged even if
 * `excluded` marks it.
 */
export function judgeLatest(values: ArrayLike<number>, options: SeasonalOptions = {}): SeasonalJudgement {
  const n = values.length;
  if (n < 1) throw new Error('judgeLatest needs at least the day to judge');
  const o = resolveOptions(options, n);
  const forward = o.transform === 'log1p' ? Math.log1p : (x: number) => x;
  const raw = values[n - 1]!;
  if (!Number.isFinite(raw)) {
    throw new Error(`judgeLatest: the latest value must be an observation, got ${raw} (a day with no rows cannot be judged)`);
  }
  if (o.transform === 'log1p' && !(raw >= 0)) throw new Error(`judgeLatest with transform 'log1p' needs values >= 0; the latest value is ${raw}`);
  const observed = forward(raw);
  const start = Math.max(0, n - 1 - o.historyDays);
  const len = n - start;
  const history = len - 1;
  const window = new Float64Array(len);
  // Baseline weights: 0 for missing and excluded days.
  const weights = new Float64Array(history);
  let usable = 0;
  for (let i = 0; i < history; i++) {
    const v = values[start + i]!;
    if (!Number.isNaN(v) && !Number.isFinite(v)) throw new Error(`judgeLatest values must be finite or NaN (missing); value ${start + i} is ${v}`);
    if (o.transform === 'log1p' && v < 0) throw new Error(`judgeLatest with transform 'log1p' needs values >= 0; value ${start + i} is ${v}`);
    window[i] = forward(v);
    const out = Number.isNaN(v) || options.excluded?.[start + i] === true;
    weights[i] = out ? 0 : 1;
    if (!out) usable++;
  }
  window[history] = observed;

  if (usable >= o.minStlDays) {
    // The judged day stays out of its own fit (out of sample). The robustness loop stops by the rule of the authors'
    // own `stlez` routine (changes under 1% of each component's range): the detector needs the fit, not R's fixed
    // 15 passes, and runs for every series every day.
    const past = window.subarray(0, history);
    const { seasonal } = stl(past, { period: o.period, sWindow: o.sWindow, robust: true, userWeights: weights, outerTolerance: 0.01 });
    const deseasonalised = past.map((v, i) => v - seasonal[i]!);
    // Residuals within 1e-9 of the series' size are the decomposition's rounding noise: count them as 0,
    // so a constant series has no spread rather than a spread of rounding errors.
    let size = Math.abs(observed);
    for (let i = 0; i < history; i++) if (Math.abs(window[i]!) > size) size = Math.abs(window[i]!);
    const clean = (r: number) => (Math.abs(r) <= 1e-9 * size ? 0 : r);
    const residuals: number[] = [];
    for (let i = 0; i < history; i++) {
      if (Number.isNaN(window[i]!)) continue;
      const { level } = localLevel(deseasonalised, weights, i, o.levelDays);
      if (!Number.isNaN(level)) residuals.push(clean(deseasonalised[i]! - level));
    }
    const latest = localLevel(deseasonalised, weights, history, o.levelDays);
    // The judged day's seasonal: its weekday's (the periodic seasonal repeats; otherwise the latest cycle's).
    const daySeasonal = seasonal[history - o.period]!;
    let sameWeekday = 0;
    for (let i = history - o.period; i >= 0; i -= o.period) if (weights[i]! > 0) sameWeekday++;
    const forecast: Forecast = {
      value: daySeasonal + latest.level,
      residual: clean(observed - daySeasonal - latest.level),
      widening: forecastWidening(sameWeekday, latest.used),
    };
    return decide('stl-esd', raw, observed, forecast, residuals, usable, o);
  }

  // Weekday medians use only earlier weeks: every residual, the judged day's too, is already out of sample.
  const baselineOptions = { period: o.period, weeks: o.baselineWeeks, userWeights: Float64Array.from([...weights, 1]) };
  const latest = weekdayBaseline(window, history, baselineOptions);
  if (latest.used < MIN_SAME_WEEKDAY) return notJudged(raw, usable);
  const residuals: number[] = [];
  for (let i = 0; i < history; i++) {
    if (Number.isNaN(window[i]!)) continue;
    const own = weekdayBaseline(window, i, baselineOptions);
    if (own.used > 0) residuals.push(window[i]! - own.expected);
  }
  if (residuals.length < MIN_BASELINE_RESIDUALS) return notJudged(raw, usable);
  return decide('weekday-median', raw, observed, { value: latest.expected, residual: observed - latest.expected, widening: 1 }, residuals, usable, o);
}

/**
 * How much wider the judged day's error is than a history residual (a ratio
 * of standard deviations; the file comment, step 3). k = `sameWeekday`, the
 * usable history days of the judged day's weekday; m = `levelDays`, the values
 * of its local level. pi / (2 m): the asymptotic variance of a sample median
 * under normality, 1 / (4 m f(median)^2), over the noise's (H. Cramér 1946,
 * "Mathematical Methods of Statistics", section 28.5; cited from memory).
 */
function forecastWidening(sameWeekday: number, levelDays: number): number {
  const k = Math.max(sameWeekday, 2);
  const level = Math.PI / (2 * levelDays);
  return Math.sqrt((1 + 1 / k + level) / (1 - 1 / k + level));
}

export interface OnlineJudgement extends SeasonalJudgement {
  index: number;
}

/**
 * Replays the detector day by day as it runs in production: each day judged from
 * its own past only, days already flagged kept out of later baselines. Missing
 * days are skipped. For backtests and the tests on labelled data.
 */
export function judgeEachDay(values: ArrayLike<number>, options: Omit<SeasonalOptions, 'excluded'> = {}): OnlineJudgement[] {
  const n = values.length;
  const all = Array.from(values);
  const flagged = new Array<boolean>(n).fill(false);
  const out: OnlineJudgement[] = [];
  for (let d = 0; d < n; d++) {
    if (Number.isNaN(all[d]!)) continue;
    const judgement = judgeLatest(all.slice(0, d + 1), { ...options, excluded: flagged.slice(0, d + 1) });
    flagged[d] = judgement.anomalous;
    out.push({ ...judgement, index: d });
  }
  return out;
}
