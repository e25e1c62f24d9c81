/**
 * `seasonal`: every daily series of a flow (people per watched event and per
 * step, step and end-to-end conversion, median step times; see `series.ts`)
 * per platform, judged on the latest day against its own day-of-week profile.
 *
 * Method: the seasonal detector of the statistics library (`judgeLatest` in
 * checks/stats/seasonal-detector.ts: robust STL with a periodic weekly
 * seasonal on a 12-week trailing window, a local level from the last two
 * weeks, the day scored out of sample against the one-point prediction
 * interval of the window's residuals at alpha = `sensitivity`, the chance that
 * a clean day of one series is flagged; the weekday median with less than
 * four weeks of usable history). Counts are judged on log(1 + x): their weekly pattern and their
 * noise are multiplicative (a quiet Sunday has a fraction of a Monday's
 * spread), so one scale on the raw counts would hide weekend collapses and
 * flag busy weekdays; rates and step times as they are. Calendar days and
 * the series' days already judged anomalous are passed as `excluded`: they
 * stay out of the fit and the level, and the generalized ESD clears them
 * from the residuals first as the outliers they are. Funnel series (rates, times) wait for the day's
 * conversion window to pass, like the `conversion` check.
 *
 * Robust residual scoring: robustness sits in the fit, not in the scale. The
 * STL's outer loop gives outlying days (past incidents, unannounced peaks, the
 * judged day itself when it is off) weights near 0, so the seasonal profile,
 * the level (a median) and hence every residual are those of the normal days;
 * the generalized ESD clears earlier outliers from the residuals so they do
 * not widen the judged day's interval (Rosner 1983), and the interval uses
 * mean and standard deviation, whose Student t quantile is exact for normal
 * residuals (a median/MAD scale has none; the detector's README).
 *
 * Defaults (a flow runs dozens of series a day, so false findings add up):
 * `sensitivity` 0.0002, one false flag per series in 5,000 clean days before
 * the floors, the least at which a 6 sd move on a trending series is caught
 * 90% of the time (the detector's test; issue 15); `direction`
 * down for counts and rates: every clean-day finding left at 0.005 was a rise
 * (a busy day lifting the people of every step together, about +25%), and
 * rises on declared high days (month-start renewals) would add some 200
 * calendar notes per five months. Step times have their own
 * `time_direction`, up by default: a slower step is the bad news (a release
 * that tripled a step's time went unreported while it shared `direction`).
 *
 * Floors: a statistically clear move can still be too small to matter, so a
 * finding also needs a practical change: `min_change` (relative) for counts;
 * for rates `min_change_pp` percentage points or, for low rates, a change of
 * `min_change_relative` of the usual rate (a step at 2% can never move 3
 * points, yet falling to 1% or to 0 is news); for step times
 * `min_change_seconds` or a factor of `min_change_factor` (a 16-second step
 * taking 45 s has moved less than 30 s, yet nearly tripled); and a volume:
 * the expected count, the rate's denominator or the timed people of the day
 * at least `min_people`. A rate's band is also widened to the day's own
 * binomial error (`withSamplingError`).
 *
 * The test is always two-sided at `sensitivity`; `direction` only filters
 * which side is reported, so the band stays finite on both sides.
 *
 * Score: the detector's score, (error - mean residual) / scale: signed, in
 * standard deviations of the day's forecast error (of log(1 + x) for counts;
 * evidence `scale` likewise).
 */
import { z } from 'zod';
import { formatCount, formatNumber, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent, severity } from '../options.js';
import { baselineExclusions, excerpt } from '../series.js';
import { SEASONAL_DEFAULTS, judgeLatest, type SeasonalJudgement } from '../stats/index.js';
import { weekday } from '../time.js';
import type { CheckInput, CheckModule, Finding, WithPlatforms } from '../types.js';
import { anomalousSince, calendarSeverity } from '../findings.js';
import { seriesFor, type JudgedSeries, type SeriesKind } from './series.js';

const EXCERPT_DAYS = 28;
const WEEKDAYS = ['Sunday', 'Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday'];

export const options = z.strictObject({
  /** Chance that a clean day of one series is flagged (the detector's alpha, per series and day): lower reports fewer, larger departures. */
  sensitivity: z.number().gt(0).lt(1).default(0.0002),
  /** Which departures of counts and rates are reported: drops (default), rises or both. */
  direction: z.enum(['down', 'up', 'both']).default('down'),
  /** Which departures of median step times are reported: slower (up, default), faster (down) or both. */
  time_direction: z.enum(['down', 'up', 'both']).default('up'),
  /** Fewest people behind a value: the expected count, the rate's denominator, the timed people. */
  min_people: z.number().int().min(1).default(100),
  /** Smallest relative change of a count worth a finding. */
  min_change: percent().default(0.2),
  /** Smallest change of a conversion rate worth a finding, in percentage points ... */
  min_change_pp: z.number().min(0).max(100).default(3),
  /** ... or as a share of the usual rate, whichever is reached first (low rates: a step at 2% falling to 1%). */
  min_change_relative: percent().default(0.5),
  /** Smallest change of a median step time worth a finding, in seconds ... */
  min_change_seconds: z.number().min(0).default(30),
  /** ... or as a factor of the usual time (2: twice as slow or half as long), whichever is reached first. */
  min_change_factor: z.number().min(1).default(2),
  severity: severity('warn'),
});
type Options = z.output<typeof options>;

const messages = {
  below: '{platform} {label} {observed} on a {weekday}, expected {low} to {high} (usual {expected}, {change})',
  above: '{platform} {label} {observed} on a {weekday}, expected {low} to {high} (usual {expected}, {change})',
};

function format(kind: SeriesKind, value: number): string {
  if (kind === 'rate') return formatPercent(value);
  if (kind === 'seconds') return `${formatNumber(value)} s`;
  return formatCount(Math.round(value));
}

/** The change from expected in the series' own terms: relative for counts, points for rates, seconds for times. */
function change(kind: SeriesKind, observed: number, expected: number): { value: number; text: string } {
  const sign = observed >= expected ? '+' : '-';
  if (kind === 'rate') {
    const pp = 100 * (observed - expected);
    return { value: pp, text: `${sign}${Math.abs(pp).toFixed(1)} pp` };
  }
  if (kind === 'seconds') return { value: observed - expected, text: `${sign}${formatNumber(Math.abs(observed - expected))} s` };
  const relative = expected > 0 ? (observed - expected) / expected : Infinity;
  return { value: relative, text: `${sign}${(100 * Math.abs(relative)).toFixed(0)}%` };
}

/**
 * Whether the departure is large enough in practice, and the series big
 * enough, to be worth a finding. Rates and times pass on either floor, the
 * absolute or the relative one, so low rates and short steps can be reported.
 */
function worthReporting(series: JudgedSeries, judged: SeasonalJudgement, o: Options): boolean {
  const { observed, expected } = judged;
  if (series.kind === 'count') return expected >= o.min_people && Math.abs(observed - expected) >= o.min_change * expected;
  if (!(series.support[series.support.length - 1]! >= o.min_people)) return false;
  const moved = Math.abs(observed - expected);
  if (series.kind === 'rate') return 100 * moved >= o.min_change_pp || moved >= o.min_change_relative * expected;
  const factor = Math.max(observed, expected) / Math.min(observed, expected);
  return moved >= o.min_change_seconds || factor >= o.min_change_factor;
}

/** The detector's options for a series: counts on log(1 + x). */
function detectorOptions(series: JudgedSeries, alpha: number, excluded: boolean[]): { alpha: number; excluded: boolean[]; transform: 'log1p' | 'none' } {
  return { alpha, excluded, transform: series.kind === 'count' ? 'log1p' : 'none' };
}

/**
 * Whether every weekday has a usable value in the detector's window (STL
 * needs each weekday's cycle-subseries): a series that is never measured on
 * some weekday (e.g. an event sent only on working days) has no weekly
 * profile to judge against.
 */
function everyWeekdayObserved(values: Float64Array, excluded: readonly boolean[]): boolean {
  const last = values.length - 1;
  const seen = new Set<number>();
  for (let i = Math.max(0, last - SEASONAL_DEFAULTS.historyDays); i <= last && seen.size < 7; i++) {
    if (!Number.isNaN(values[i]!) && (!excluded[i] || i === last)) seen.add(i % 7);
  }
  return seen.size === 7;
}

/**
 * A rate's band widened to the day's own binomial sampling error where that
 * exceeds the spread of the series' residuals: the detector scores every day
 * with one spread, but a day with few people at the denominator (a weekend, a
 * quiet segment) varies more by chance alone. The day must leave the widened
 * band, centre +- critical x max(spread, sqrt(p (1 - p) / n)), to count.
 */
function withSamplingError(judged: SeasonalJudgement, trials: number): SeasonalJudgement {
  const p = Math.min(1, Math.max(0, judged.expected));
  const spread = Math.max(judged.scale, Math.sqrt((p * (1 - p)) / trials));
  const low = judged.expected - judged.critical * spread;
  const high = judged.expected + judged.critical * spread;
  const anomalous = judged.anomalous && (judged.observed < low || judged.observed > high);
  return { ...judged, low, high, anomalous, direction: anomalous ? judged.direction : 'none' };
}

function clampBand(kind: SeriesKind, low: number, high: number): [number, number] {
  return kind === 'rate' ? [Math.max(0, low), Math.min(1, high)] : [Math.max(0, low), high];
}

function finding(input: CheckInput, o: Options, platform: string, series: JudgedSeries, judged: SeasonalJudgement, excluded: boolean[]): Finding {
  const last = input.days.length - 1;
  const low = new Float64Array(input.days.length).fill(Number.NaN);
  const high = new Float64Array(input.days.length).fill(Number.NaN);
  for (let i = Math.max(0, last - EXCERPT_DAYS + 1); i <= last; i++) {
    if (Number.isNaN(series.values[i]!)) continue;
    let past = i === last ? judged : judgeLatest(series.values.subarray(0, i + 1), detectorOptions(series, o.sensitivity, excluded.slice(0, i + 1)));
    if (i !== last && series.kind === 'rate') past = withSamplingError(past, series.support[i]!);
    if (past.method !== 'insufficient-history') [low[i], high[i]] = clampBand(series.kind, past.low, past.high);
  }
  const direction = judged.direction === 'below' ? 'down' : 'up';
  const [bandLow, bandHigh] = clampBand(series.kind, judged.low, judged.high);
  const moved = change(series.kind, judged.observed, judged.expected);
  const { severity: findingSeverity, calendar } = calendarSeverity(input, direction, o.severity);
  const since = anomalousSince(input, series.seriesKey);
  return {
    check: 'seasonal',
    kind: judged.direction,
    flow: input.flow.id,
    subject: series.subject,
    metric: series.metric,
    platform,
    version: null,
    day: input.day,
    ...(since !== undefined ? { since } : {}),
    observed: judged.observed,
    expected: { low: bandLow, high: bandHigh, center: judged.expected },
    score: judged.score,
    direction,
    severity: findingSeverity,
    message: renderMessage(messages[judged.direction as 'below' | 'above'], {
      platform,
      label: series.label,
      observed: format(series.kind, judged.observed),
      weekday: WEEKDAYS[weekday(input.day)],
      low: format(series.kind, bandLow),
      high: format(series.kind, bandHigh),
      expected: format(series.kind, judged.expected),
      change: moved.text,
    }),
    seriesKey: series.seriesKey,
    excerpt: excerpt(input.days, series.values, EXCERPT_DAYS, { low, high }, new Set([...(input.anomalous[series.seriesKey] ?? []), input.day])),
    ...(calendar !== undefined ? { calendar } : {}),
    evidence: {
      method: judged.method,
      change: Number(moved.value.toFixed(4)),
      critical: Number(judged.critical.toFixed(3)),
      scale: judged.scale,
      history_days: judged.historyUsed,
      people: series.support[last]!,
    },
  };
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const last = input.days.length - 1;
  const findings: Finding[] = [];
  for (const platform of input.flow.platforms) {
    const o = optionsFor(all, platform);
    for (const series of seriesFor(input, platform)) {
      // A day with no value is a volume or freshness matter (no rows), not a seasonal one.
      if (Number.isNaN(series.values[last]!)) continue;
      const skip = baselineExclusions(series.seriesKey, input.anomalous, input.calendar);
      const excluded = input.days.map((day) => skip.has(day));
      if (!everyWeekdayObserved(series.values, excluded)) continue;
      const detected = judgeLatest(series.values, detectorOptions(series, o.sensitivity, excluded));
      const judged = series.kind === 'rate' ? withSamplingError(detected, series.support[last]!) : detected;
      if (!judged.anomalous) continue;
      const wanted = series.kind === 'seconds' ? o.time_direction : o.direction;
      if (wanted !== 'both' && wanted !== (judged.direction === 'below' ? 'down' : 'up')) continue;
      if (!worthReporting(series, judged, o)) continue;
      findings.push(finding(input, o, platform, series, judged, excluded));
    }
  }
  return findings;
}

export const seasonalCheck: CheckModule<typeof options> = {
  id: 'seasonal',
  description: 'Any daily series of a flow (people per event and step, conversion, step times) per platform against its own day-of-week profile, with practical-change floors.',
  options,
  messages,
  run,
  needsHistory: true,
};
