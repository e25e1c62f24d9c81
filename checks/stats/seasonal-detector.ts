/**
 * Seasonal detector: judges the latest day of a daily series against a
 * day-of-week baseline built from its own past (no look-ahead). This is the
 * entry point the `seasonal` check calls.
 *
 * Citation: the seasonal ESD (S-ESD) and seasonal hybrid ESD (S-H-ESD) of
 * J. Hochenbaum, O. S. Vallis and A. Kejariwal (2017), "Automatic Anomaly
 * Detection in the Cloud Via Statistical Learning", arXiv:1704.07706, applied
 * to a trailing window that ends on the judged day: robust STL (R. B.
 * Cleveland, W. S. Cleveland, J. E. McRae and I. Terpenning 1990, J. Official
 * Statistics 6(1):3-73) with a periodic seasonal, residual = value - seasonal -
 * median level, then Rosner's generalized ESD test (Technometrics 25(2):165-172,
 * 1983).
 *
 * Method for the latest day D:
 * 1. Window: the `historyDays` days before D, and D. Missing days (NaN: no rows)
 *    take no part at all. Days in `excluded` (e.g. already judged anomalous)
 *    are kept out of the baseline (the STL fit and the median level) but stay in
 *    the ESD's sample as what they are, past anomalies, which the test removes
 *    first. D is part of its window as in the paper, so every residual is
 *    computed alike; robust fitting gives an anomalous D almost no weight. (Left
 *    out of its own fit, D's residual would be an out-of-sample error scored
 *    against in-sample ones: on clean synthetic series that raised the
 *    false-alarm rate by 50 to 80%.)
 * 2. With at least `minStlDays` usable history days (default 28: four full
 *    weeks; R's `stl` refuses fewer than two periods, and four give each
 *    weekday's cycle-subseries four points to be robust with; common practice,
 *    this is the switch point) the baseline is robust STL with period 7 plus the
 *    median level: method 'stl-esd'. With less, it is the median of the same
 *    weekday over the last 4 weeks (`weekday-baseline.ts`), each history day
 *    measured against its own earlier weeks: method 'weekday-median'. With fewer
 *    than 2 earlier same-weekday values for D, or fewer than 7 history
 *    residuals, nothing is judged: 'insufficient-history'.
 * 3. The generalized ESD (at most k = 10% of the window, level alpha) runs on
 *    the window's residuals; D is anomalous when it is among the outliers found.
 *    Score, band and critical value are those of the ESD step at which D was
 *    examined (after the more extreme points were removed): score =
 *    (residual - center) / scale, band = expected + center +- critical * scale.
 *    Two consequences of the sequential test, both intended: a day just outside
 *    the band is not flagged when more than k of the window is already more
 *    extreme (a long run of "anomalies" is a changed series and stops paging);
 *    and a day can be flagged just inside its band when a later step confirms
 *    several outliers together (Rosner's rule).
 *
 * Mean and standard deviation by default (S-ESD), not median and MAD (S-H-ESD,
 * `robust: true`): with Student-t critical values the MAD version is not at its
 * nominal level. Simulated on normal samples (test/stats/seasonal-detector.test.ts)
 * it declares some outlier in 14% of windows of 85 and 27% of windows of 30 at
 * alpha 0.05, against 5% for the mean and standard deviation, whose sequential
 * removal already protects against masking by up to k outliers (Rosner 1983).
 *
 * Defaults, chosen for an on-call analyst who must trust every page:
 * - alpha 0.05 (Rosner's and the NIST handbook's level). The ESD bounds the
 *   chance of any false outlier in the whole window, so a normal day is flagged
 *   with probability of the order of alpha / window size: measured 0.06% to
 *   0.2% of days on clean synthetic series, under one false alarm per series a
 *   year. The check's `sensitivity` maps to alpha.
 * - k = 0.1: at most one day in ten of the window may be anomalous (a holiday
 *   week plus a bad release fit; more than that is a regime change).
 * - 12 weeks of history: a stable weekly profile and scale, while last
 *   quarter's level does not linger. A periodic seasonal (one weekly profile per
 *   window) has the lowest false-alarm rate of the spans tried; the profile
 *   still follows changes as the window moves.
 * The NYC taxi test (test/stats/seasonal-detector.test.ts) checks these on
 * labelled real data.
 *
 * Zero scale: a window whose residuals are all equal (e.g. a count stuck at 0)
 * has no spread and nothing is flagged; a D that departs from such a history
 * is flagged (the ESD statistic of one value against identical others is the
 * largest possible). Residuals within 1e-9 of the series' size are rounding
 * noise of the decomposition and count as 0.
 *
 * Complexity: O(W) for the STL plus O(k W^2) for the ESD, W the window length;
 * under a millisecond for 12 weeks.
 *
 * Example (a completion rate in %, eight weeks of history, then a bad Monday):
 *   const profile = [55, 58, 59, 60, 57, 48, 45];
 *   const rates = Array.from({ length: 56 }, (_, t) => profile[t % 7]! + ((t * 7) % 5) * 0.4);
 *   judgeLatest([...rates, 41])
 *   // { method: 'stl-esd', observed: 41, expected: 58.3, low: 49.1, high: 62.1,
 *   //   score: -7.13, direction: 'below', anomalous: true, critical: 3.18, ... }
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
};

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

/**
 * Runs the ESD on the residuals (the judged day last) and reads off the
 * judged day's verdict, and the center, scale and critical value of the step at
 * which it was examined (the step after the quota when it was never reached).
 */
function decide(
  method: SeasonalMethod,
  observed: number,
  expected: number,
  residuals: number[],
  historyUsed: number,
  o: typeof SEASONAL_DEFAULTS,
): SeasonalJudgement {
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
  return {
    method,
    observed,
    expected,
    low: o.alternative === 'greater' ? -Infinity : expected + center - critical * scale,
    high: o.alternative === 'less' ? Infinity : expected + center + critical * scale,
    score,
    direction: anomalous ? (score > 0 ? 'above' : 'below') : 'none',
    anomalous,
    critical,
    scale,
    historyUsed,
  };
}

function resolveOptions(options: SeasonalOptions, n: number): typeof SEASONAL_DEFAULTS {
  const o = { ...SEASONAL_DEFAULTS, ...options };
  for (const key of ['period', 'historyDays', 'minStlDays', 'baselineWeeks'] as const) {
    if (!Number.isInteger(o[key]) || o[key] < 1) throw new Error(`judgeLatest ${key} must be a whole number >= 1, got ${o[key]}`);
  }
  if (o.minStlDays <= 2 * o.period) {
    throw new Error(`judgeLatest minStlDays must exceed two periods (${2 * o.period}) for STL, got ${o.minStlDays}`);
  }
  if (!(o.alpha > 0 && o.alpha < 1)) throw new Error(`judgeLatest alpha must lie strictly between 0 and 1, got ${o.alpha}`);
  if (!(o.maxAnomalies > 0 && o.maxAnomalies <= 0.49)) {
    throw new Error(`judgeLatest maxAnomalies is a fraction of the window, above 0 and at most 0.49; got ${o.maxAnomalies}`);
  }
  if (options.excluded !== undefined && options.excluded.length !== n) {
    throw new Error(`judgeLatest excluded must have one entry per value (${n}), got ${options.excluded.length}`);
  }
  return o;
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
  const observed = values[n - 1]!;
  if (!Number.isFinite(observed)) {
    throw new Error(`judgeLatest: the latest value must be an observation, got ${observed} (a day with no rows cannot be judged)`);
  }
  const start = Math.max(0, n - 1 - o.historyDays);
  const len = n - start;
  const window = new Float64Array(len);
  // Baseline weights: 0 for missing and excluded days.
  const weights = new Float64Array(len);
  let usable = 0;
  for (let i = 0; i < len; i++) {
    const v = values[start + i]!;
    if (!Number.isNaN(v) && !Number.isFinite(v)) throw new Error(`judgeLatest values must be finite or NaN (missing); value ${start + i} is ${v}`);
    window[i] = v;
    const out = Number.isNaN(v) || options.excluded?.[start + i] === true;
    weights[i] = out ? 0 : 1;
    if (!out && i < len - 1) usable++;
  }
  // The judged day is never excluded from its own window (see the file comment).
  weights[len - 1] = 1;

  if (usable >= o.minStlDays) {
    // The robustness loop stops by the rule of the authors' own `stlez` routine (changes under 1% of each
    // component's range): the detector needs the fit, not R's fixed 15 passes, and runs for every series every day.
    const { seasonal } = stl(window, { period: o.period, sWindow: o.sWindow, robust: true, userWeights: weights, outerTolerance: 0.01 });
    const level = median(Array.from(window).filter((_, i) => weights[i]! > 0));
    // Residuals within 1e-9 of the series' size are the decomposition's rounding noise: count them as 0,
    // so a constant series has no spread rather than a spread of rounding errors.
    let size = 0;
    for (let i = 0; i < len; i++) if (Math.abs(window[i]!) > size) size = Math.abs(window[i]!);
    const residuals: number[] = [];
    for (let i = 0; i < len; i++) {
      if (Number.isNaN(window[i]!)) continue;
      const r = window[i]! - seasonal[i]! - level;
      residuals.push(Math.abs(r) <= 1e-9 * size ? 0 : r);
    }
    return decide('stl-esd', observed, seasonal[len - 1]! + level, residuals, usable, o);
  }

  // Weekday medians use only earlier weeks, so the judged day never enters its own baseline here.
  const baselineOptions = { period: o.period, weeks: o.baselineWeeks, userWeights: weights };
  const latest = weekdayBaseline(window, len - 1, baselineOptions);
  if (latest.used < MIN_SAME_WEEKDAY) return notJudged(observed, usable);
  const residuals: number[] = [];
  for (let i = 0; i < len - 1; i++) {
    if (Number.isNaN(window[i]!)) continue;
    const own = weekdayBaseline(window, i, baselineOptions);
    if (own.used > 0) residuals.push(window[i]! - own.expected);
  }
  if (residuals.length < MIN_BASELINE_RESIDUALS) return notJudged(observed, usable);
  residuals.push(observed - latest.expected);
  return decide('weekday-median', observed, latest.expected, residuals, usable, o);
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
