/**
 * `segments`: each value of each configured dimension (`warehouse.dimensions`,
 * e.g. `country = CA`) watched on its own, so a collapse inside one value
 * that moves the flow's total less than the total's thresholds is still seen.
 *
 * Series, per dimension value, on each platform and on all platforms together:
 * people entering the flow (the entry step, funnel step 0), end-to-end
 * conversion (flows of more than one step) and people sending each watched
 * event. Rows: the rollups' per-dimension-value rows (all versions).
 *
 * Method, per series of one value:
 * - The value is judged by its share of its dimension's total (every value
 *   together) on the same day: y = log((people + 1) / (total + 1)) for
 *   people, the value's conversion log odds less the flow's for conversion. A
 *   move of everyone at once (a holiday, a platform's tracking, a late load)
 *   leaves y where it was: those are the totals' checks' to report, and a
 *   release or a platform break never reads as a segment here. (Against the
 *   rest alone, a value holding most of the flow would be judged on the noise
 *   of a small rest: the demo's US, 83% of web sign-ups, "fell" by half the
 *   day Canada's few sign-ups doubled.)
 * - Expectation: y's median on the same weekday over the last four usable
 *   weeks (looking back up to sixteen when recent weeks were left out), as
 *   `volume` (`weekdayBaseline` in checks/stats); the expected people are
 *   today's total times that usual share ("the value's own weekday
 *   expectation", given how the whole flow did today). Calendar days and
 *   days already flagged for the series never enter the baseline.
 * - Spread: 1.4826 MAD of y minus its expectation over the last eight weeks,
 *   floored at the multinomial noise of the share, (1 - share) / people, or
 *   the binomial noise of the log odds, (1 - share) / (n p (1 - p)) (delta
 *   method); score z = (y - expected) / spread; one-sided
 *   p-value for a drop from Student's t on (days in the spread - 1) degrees of
 *   freedom (the spread is estimated; common practice). A value needs
 *   MIN_SPREAD_DAYS of history before it is judged.
 * - Multiple testing: every value x series x platform judged on the day is one
 *   test of one family, the flow's; Benjamini-Hochberg at
 *   `false_discovery_rate` (checks/stats/benjamini-hochberg.ts) keeps the
 *   expected share of false findings among those reported at that rate.
 * - Floors, as `volume`: expected people at least `min_people` (conversion:
 *   expected completions); a drop of more than `max_drop`
 *   against expectation; |z| at least `min_score`. Only drops are reported:
 *   a value gaining people is rarely a breakage.
 * - Cardinality: a dimension with more than `max_values` values is watched on
 *   its `max_values` largest by people over the history (the others still count
 *   in the total).
 * - All platforms together speak for a series of a value only when no single
 *   platform's series of it was reported (as `conversion`).
 *
 * Severity, by the share of the flow's people lost (not the relative drop
 * inside the value): people lost = expected - observed (conversion: the
 * completions lost, people entering x (expected - observed rate)), over the
 * flow's expected people of that series on that platform; `page_loss` or more
 * is page, `warn_loss` or more warn, less a note. On a declared low calendar
 * day a drop is a note carrying the calendar's note.
 *
 * Finding: observed = the value's people (conversion: its rate), expected =
 * the expectation above with the band of values that would not be reported;
 * score = z. Evidence: dimension, value, its usual share, the people lost and
 * their share of the flow, p-value and BH-adjusted p-value, tests in the
 * family. The cause analysis labels it `segment`, naming the value.
 */
import { z } from 'zod';
import { formatCount, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent } from '../options.js';
import { anomalousSince, calendarSeverity } from '../findings.js';
import { conversionSettled } from '../funnel.js';
import { baselineExclusions, excerpt } from '../series.js';
import { benjaminiHochberg, robustLocationScale, tCdf } from '../stats/index.js';
import { weekday } from '../time.js';
import { weekdayExpectation } from '../volume/baseline.js';
import { ALL_VERSIONS, type CheckInput, type CheckModule, type Finding, type Severity, type WithPlatforms } from '../types.js';

export const options = z.strictObject({
  max_drop: percent()
    .default(0.3)
    .describe("A value with more than this share fewer people (or a lower conversion) than its usual share of the flow predicts is a drop."),
  min_people: z.number().int().min(1).default(50).describe('Values expected to have fewer people than this on the day (conversion: fewer completions) are not judged.'),
  min_score: z
    .number()
    .min(0)
    .default(4)
    .describe("Least robust z of the value's share of the flow: a drop must also stand out from that share's own day-to-day noise."),
  false_discovery_rate: z
    .number()
    .gt(0)
    .lt(1)
    .default(0.01)
    .describe('Benjamini-Hochberg level over every value x series x platform of the flow judged on a day.'),
  max_values: z.number().int().min(1).default(50).describe("A dimension with more values than this is watched on its largest ones by people only."),
  warn_loss: percent().default(0.02).describe("A drop losing at least this share of the flow's people is a warn; smaller ones are notes."),
  page_loss: percent().default(0.3).describe("A drop losing at least this share of the flow's people is a page."),
});
type Options = z.output<typeof options>;

const messages = {
  drop: '{dimension}={value} on {platform}, {subject}: {observed} people on {day}, {change} below the {expected} its usual {share} of the flow predicts ({lost} people, {lost_share} of the flow; since {since}){calendar}',
  conversion_drop:
    '{dimension}={value} on {platform}, end-to-end conversion {observed} on {day} against {expected} usual beside the whole flow ({entering} people entering, {lost} completions lost, {lost_share} of the flow; since {since}){calendar}',
};

/** Fewest history days of the value's ratio behind a spread (two weeks: no judgement in a flow's first four weeks of rollups). */
const MIN_SPREAD_DAYS = 14;
/** History days whose residuals give the spread (eight weeks, as `volume`). */
const SPREAD_DAYS = 56;
const EXCERPT_DAYS = 28;
const ALL_PLATFORMS = 'all';
const WEEKDAYS = ['Sunday', 'Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday'];

type SeriesKind = 'entry' | 'conversion' | 'event';

/** One watched series of the flow, before it is split by dimension value. */
interface SeriesDef {
  kind: SeriesKind;
  /** Series key part: `entry`, `conversion` or `event:<name>`. */
  key: string;
  subject: Finding['subject'];
  metric: string;
  /** How messages name it. */
  label: string;
}

/** Daily numerator (people, or completions) and denominator (conversion: people entering) of one value or a dimension's total. */
interface Daily {
  num: Float64Array;
  den: Float64Array;
}

/** One test: a series of one value on one platform (null: all together) on the judged day. */
interface Test {
  series: SeriesDef;
  dimension: string;
  value: string;
  platform: string | null;
  seriesKey: string;
  o: Options;
  /** The value's and its dimension's daily counts, and the expected share (log scale) of each recent day, for the excerpt. */
  own: Daily;
  total: Daily;
  expectedY: Float64Array;
  observed: number;
  expected: number;
  z: number;
  pValue: number;
  spread: number;
  spreadDays: number;
  /** The value's usual share of the flow (people, or people entering for conversion). */
  share: number;
  /** People (conversion: completions) lost, and their share of the flow's expected ones. */
  lost: number;
  lostShare: number;
  /** People entering the value on the day (conversion). */
  entering: number;
  /** The rest of the dimension on the day: people, or completions for conversion. */
  rest: number;
  floors: boolean;
}

function seriesOf(input: CheckInput): SeriesDef[] {
  const flow = input.flow;
  const first = flow.steps[0]!;
  const list: SeriesDef[] = [
    { kind: 'entry', key: 'entry', subject: { type: 'step', name: first.name, step: first.name, event: first.event }, metric: 'people', label: `people entering at ${first.name}` },
  ];
  if (flow.steps.length >= 2) list.push({ kind: 'conversion', key: 'conversion', subject: { type: 'flow', name: flow.id }, metric: 'end_to_end_conversion', label: 'end-to-end conversion' });
  for (const event of flow.events) list.push({ kind: 'event', key: `event:${event}`, subject: { type: 'event', name: event, event }, metric: 'people', label: event });
  return list;
}

/** Daily counts per series key, dimension, platform ('' for all together) and value, from the per-value rollup rows (all versions). */
type Cells = Map<string, Map<string, Map<string, Map<string, Daily>>>>;

function newDaily(n: number): Daily {
  return { num: new Float64Array(n).fill(Number.NaN), den: new Float64Array(n).fill(Number.NaN) };
}

/** The values of one series, dimension and platform: nested maps, so no key is built per row. */
function valuesOf(cells: Cells, series: string, dimension: string, platform: string): Map<string, Daily> {
  let dimensions = cells.get(series);
  if (!dimensions) cells.set(series, (dimensions = new Map()));
  let platforms = dimensions.get(dimension);
  if (!platforms) dimensions.set(dimension, (platforms = new Map()));
  let values = platforms.get(platform);
  if (!values) platforms.set(platform, (values = new Map()));
  return values;
}

function add(values: Map<string, Daily>, value: string, n: number, day: number, num: number, den: number): void {
  let daily = values.get(value);
  if (!daily) values.set(value, (daily = newDaily(n)));
  daily.num[day] = (Number.isNaN(daily.num[day]!) ? 0 : daily.num[day]!) + num;
  daily.den[day] = (Number.isNaN(daily.den[day]!) ? 0 : daily.den[day]!) + den;
}

/** Platform key of all platforms together in `Cells` (platform names are never empty). */
const TOGETHER = '';

/** Every value's daily counts, per platform and over the flow's platforms together. */
function cellsOf(input: CheckInput): Cells {
  const flow = input.flow;
  const index = new Map(input.days.map((day, i) => [day, i]));
  const n = input.days.length;
  const platforms = new Set(flow.platforms);
  const eventKeys = new Map(flow.events.map((event) => [event, `event:${event}`]));
  const last = flow.steps.length - 1;
  const cells: Cells = new Map();
  const both = (series: string, row: { dimension: string; platform: string; value: string }, day: number, num: number, den: number) => {
    add(valuesOf(cells, series, row.dimension, row.platform), row.value, n, day, num, den);
    add(valuesOf(cells, series, row.dimension, TOGETHER), row.value, n, day, num, den);
  };
  for (const row of input.funnel) {
    if (row.dimension === '' || row.version !== ALL_VERSIONS || !platforms.has(row.platform) || row.flow !== flow.id) continue;
    const day = index.get(row.day);
    if (day === undefined) continue;
    if (row.step === 0) both('entry', row, day, Number(row.reached), 0);
    // Conversion: completions over people entering (everyone entering at any step with `entry: any_step`).
    const entering = flow.entry === 'any_step' ? Number(row.entered) : row.step === 0 ? Number(row.reached) : 0;
    const completed = row.step === last ? Number(row.reached) : 0;
    if (last >= 1 && (row.step === 0 || row.step === last || flow.entry === 'any_step')) both('conversion', row, day, completed, entering);
  }
  for (const row of input.events) {
    if (row.dimension === '' || row.version !== ALL_VERSIONS || !platforms.has(row.platform)) continue;
    const series = eventKeys.get(row.event);
    const day = index.get(row.day);
    if (series !== undefined && day !== undefined) both(series, row, day, Number(row.people), 0);
  }
  return cells;
}

/** The dimension's total per day: NaN on days with no row of any value (unknown), else the sum. */
function totalOf(values: Iterable<Daily>, n: number): Daily {
  const total = newDaily(n);
  for (const daily of values) {
    for (let i = 0; i < n; i++) {
      if (Number.isNaN(daily.num[i]!)) continue;
      total.num[i] = (Number.isNaN(total.num[i]!) ? 0 : total.num[i]!) + daily.num[i]!;
      total.den[i] = (Number.isNaN(total.den[i]!) ? 0 : total.den[i]!) + daily.den[i]!;
    }
  }
  return total;
}

/** The `max` values with the most people (conversion: people entering) over the history. */
function largestValues(values: Map<string, Daily>, kind: SeriesKind, max: number): string[] {
  const size = (daily: Daily) => (kind === 'conversion' ? daily.den : daily.num).reduce((sum, v) => sum + (Number.isNaN(v) ? 0 : v), 0);
  return [...values.entries()]
    .map(([value, daily]) => ({ value, size: size(daily) }))
    .sort((a, b) => b.size - a.size || a.value.localeCompare(b.value))
    .slice(0, max)
    .map((entry) => entry.value);
}

/** Log odds with a half added to each cell (Haldane's correction), so 0 and all stay finite. */
function logOdds(successes: number, trials: number): number {
  return Math.log((successes + 0.5) / (trials - successes + 0.5));
}

/** What the value would be on day i at its usual share of the flow: people, or a rate beside the flow's (NaN when unknown). */
function expectedOn(conversion: boolean, total: Daily, expectedY: Float64Array, i: number): number {
  if (!Number.isFinite(expectedY[i]!) || Number.isNaN(total.num[i]!)) return Number.NaN;
  if (!conversion) return (total.num[i]! + 1) * Math.exp(expectedY[i]!) - 1;
  const odds = Math.exp(logOdds(total.num[i]!, total.den[i]!) + expectedY[i]!);
  return odds / (1 + odds);
}

/** The value's people (conversion: its rate) on each day, for the excerpt; NaN where unknown. */
function shownOf(conversion: boolean, own: Daily, total: Daily, n: number): Float64Array {
  const shown = new Float64Array(n).fill(Number.NaN);
  for (let i = 0; i < n; i++) {
    if (Number.isNaN(total.num[i]!)) continue;
    const num = Number.isNaN(own.num[i]!) ? 0 : own.num[i]!;
    const den = Number.isNaN(own.den[i]!) ? 0 : own.den[i]!;
    if (!conversion) shown[i] = num;
    else if (den > 0) shown[i] = num / den;
  }
  return shown;
}

/**
 * Judges the last day of one value's series by its share of its dimension's total;
 * undefined when the day is unknown, the value had no history or the spread too few days.
 */
function judge(input: CheckInput, series: SeriesDef, own: Daily, total: Daily, o: Options, seriesKey: string): Omit<Test, 'series' | 'dimension' | 'value' | 'platform' | 'seriesKey' | 'o'> | undefined {
  const n = input.days.length;
  const last = n - 1;
  const conversion = series.kind === 'conversion';
  const skip = baselineExclusions(seriesKey, input.anomalous, input.calendar);
  const y = new Float64Array(n).fill(Number.NaN);
  let seen = false;
  for (let i = 0; i < n; i++) {
    if (Number.isNaN(total.num[i]!)) continue;
    const num = Number.isNaN(own.num[i]!) ? 0 : own.num[i]!;
    const den = Number.isNaN(own.den[i]!) ? 0 : own.den[i]!;
    // Before the value's first row it did not exist yet: unknown, not 0.
    if (!seen && Number.isNaN(own.num[i]!)) continue;
    seen = true;
    if (conversion) {
      if (!(den > 0 && total.den[i]! > den)) continue;
      y[i] = logOdds(num, den) - logOdds(total.num[i]!, total.den[i]!);
    } else {
      y[i] = Math.log((num + 1) / (total.num[i]! + 1));
    }
  }
  if (Number.isNaN(y[last]!)) return undefined;
  const observedY = y[last]!;
  // Left-out days (calendar, anomalous) neither serve as anyone's baseline nor add to the spread.
  const base = y;
  for (let i = 0; i < last; i++) if (skip.has(input.days[i]!)) base[i] = Number.NaN;
  const expectedY = new Float64Array(n).fill(Number.NaN);
  const residuals: number[] = [];
  for (let i = Math.max(0, last - SPREAD_DAYS); i <= last; i++) {
    expectedY[i] = weekdayExpectation(base, i).expected;
    if (i < last && Number.isFinite(expectedY[i]!) && !Number.isNaN(base[i]!)) residuals.push(base[i]! - expectedY[i]!);
  }
  const center = expectedY[last]!;
  if (!Number.isFinite(center) || residuals.length < MIN_SPREAD_DAYS) return undefined;
  const num = own.num[last]!;
  const den = own.den[last]!;
  const restNum = total.num[last]! - num;
  const restDen = total.den[last]! - den;
  const expected = expectedOn(conversion, total, expectedY, last);
  let floor: number;
  let observed: number;
  let share: number;
  let lost: number;
  let lostShare: number;
  let floors: boolean;
  let counts: { observed: number; expected: number };
  if (conversion) {
    observed = den > 0 ? num / den : Number.NaN;
    share = den / (den + restDen);
    // Binomial noise of the value's log odds less the flow's, which holds the value (delta method, at the
    // expected rate): (1 - share) / (n p (1 - p)).
    floor = Math.sqrt((1 - share) / Math.max(den * expected * (1 - expected), 0.25));
    lost = den * (expected - observed);
    lostShare = lost / (den * expected + restNum);
    // The people a conversion stands for are its completions: too few expected and a rate is mostly noise.
    floors = den * expected >= o.min_people && observed < expected * (1 - o.max_drop);
    counts = { observed: num, expected: den * expected };
  } else {
    observed = num;
    share = expected / (expected + restNum);
    // Multinomial noise of the value's share on the log scale: (1 - share) / people.
    floor = Math.sqrt((1 - share) / (expected + 1));
    lost = expected - observed;
    lostShare = lost / (expected + restNum);
    floors = expected >= o.min_people && observed < expected * (1 - o.max_drop);
    counts = { observed: num, expected };
  }
  const spread = Math.max(robustLocationScale(residuals).scale, floor);
  // The log of a count of a few dozen overstates how unlikely a low day is: the score is also capped at the
  // count's own z on Anscombe's square-root scale (F. J. Anscombe 1948, Biometrika 35:246-254; variance 1
  // for a Poisson count), widened by 1 / (1 - share) as the value is part of the total.
  const countZ = (2 * (Math.sqrt(counts.observed + 0.375) - Math.sqrt(Math.max(counts.expected, 0) + 0.375))) / Math.sqrt(Math.max(1 - share, 1e-9));
  const zScore = Math.max((observedY - center) / spread, countZ);
  if (!Number.isFinite(zScore)) return undefined;
  return {
    own,
    total,
    expectedY,
    observed,
    expected,
    z: zScore,
    pValue: tCdf(zScore, residuals.length - 1),
    spread,
    spreadDays: residuals.length,
    share,
    lost,
    lostShare,
    entering: den,
    rest: restNum,
    floors: floors && zScore <= -o.min_score,
  };
}

function severityOf(test: Test): Severity {
  if (test.lostShare >= test.o.page_loss) return 'page';
  return test.lostShare >= test.o.warn_loss ? 'warn' : 'note';
}

function finding(input: CheckInput, test: Test, adjusted: number, tests: number): Finding {
  const conversion = test.series.kind === 'conversion';
  const { severity, calendar } = calendarSeverity(input, 'down', severityOf(test));
  const since = anomalousSince(input, test.seriesKey) ?? input.day;
  const flagged = new Set([...(input.anomalous[test.seriesKey] ?? []), input.day]);
  const n = input.days.length;
  const conversionSeries = test.series.kind === 'conversion';
  const shown = shownOf(conversionSeries, test.own, test.total, n);
  const expectedShown = new Float64Array(n).fill(Number.NaN);
  for (let i = Math.max(0, n - EXCERPT_DAYS); i < n; i++) expectedShown[i] = expectedOn(conversionSeries, test.total, test.expectedY, i);
  const band = (factor: number) => expectedShown.map((e) => e * factor);
  const platform = test.platform ?? 'all platforms';
  const common = {
    platform,
    dimension: test.dimension,
    value: test.value,
    day: input.day,
    lost: formatCount(Math.max(0, test.lost)),
    lost_share: formatPercent(test.lostShare),
    since,
    calendar: calendar !== undefined ? `; ${input.day} is declared in the calendar: ${calendar}` : '',
  };
  const message = conversion
    ? renderMessage(messages.conversion_drop, {
        ...common,
        observed: formatPercent(test.observed),
        expected: formatPercent(test.expected),
        entering: formatCount(test.entering),
      })
    : renderMessage(messages.drop, {
        ...common,
        subject: test.series.label,
        observed: formatCount(test.observed),
        expected: formatCount(test.expected),
        change: formatPercent(1 - test.observed / test.expected, 0),
        share: formatPercent(test.share, 0),
      });
  return {
    check: 'segments',
    kind: conversion ? 'conversion_drop' : 'drop',
    flow: input.flow.id,
    subject: test.series.subject,
    metric: test.series.metric,
    platform: test.platform,
    version: null,
    day: input.day,
    since,
    observed: test.observed,
    expected: { low: test.expected * (1 - test.o.max_drop), high: test.expected / (1 - test.o.max_drop), center: test.expected },
    score: test.z,
    direction: 'down',
    severity,
    message,
    seriesKey: test.seriesKey,
    excerpt: excerpt(input.days, shown, EXCERPT_DAYS, { low: band(1 - test.o.max_drop), high: band(1 / (1 - test.o.max_drop)) }, flagged),
    ...(calendar !== undefined ? { calendar } : {}),
    evidence: {
      dimension: test.dimension,
      value: test.value,
      usualShare: test.share,
      expected: test.expected,
      lost: test.lost,
      lostShare: test.lostShare,
      rest: test.rest,
      z: test.z,
      pValue: test.pValue,
      pAdjusted: adjusted,
      tests,
      spread: test.spread,
      spreadDays: test.spreadDays,
      weekday: WEEKDAYS[weekday(input.day)]!,
      ...(conversion ? { entering: test.entering } : {}),
    },
  };
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const flow = input.flow;
  const n = input.days.length;
  const cells = cellsOf(input);
  const settled = conversionSettled(input);
  const tests: Test[] = [];
  for (const series of seriesOf(input)) {
    // A day's conversion is judged only once its cohort has had the whole conversion window (as `conversion`).
    if (series.kind === 'conversion' && !settled) continue;
    for (const [dimension, byPlatform] of [...(cells.get(series.key) ?? new Map<string, Map<string, Map<string, Daily>>>())].sort(([a], [b]) => a.localeCompare(b))) {
      for (const platform of [...flow.platforms, null]) {
        const values = byPlatform.get(platform ?? TOGETHER);
        if (!values || values.size < 2) continue;
        const o = platform === null ? all : optionsFor(all, platform);
        const total = totalOf(values.values(), n);
        for (const value of largestValues(values, series.kind, all.max_values)) {
          const seriesKey = `segments:${series.key}:${dimension}=${value}:${platform ?? ALL_PLATFORMS}:*`;
          const judged = judge(input, series, values.get(value)!, total, o, seriesKey);
          if (judged) tests.push({ series, dimension, value, platform, seriesKey, o, ...judged });
        }
      }
    }
  }
  const { adjusted, rejected } = benjaminiHochberg(
    tests.map((t) => t.pValue),
    all.false_discovery_rate,
  );
  const reported = tests.map((test, i) => test.floors && rejected[i]!);
  const onPlatform = new Set(tests.filter((t, i) => reported[i] && t.platform !== null).map((t) => `${t.series.key}|${t.dimension}|${t.value}`));
  const findings: Finding[] = [];
  tests.forEach((test, i) => {
    if (!reported[i]) return;
    // All platforms together speak only for a drop no single platform shows.
    if (test.platform === null && onPlatform.has(`${test.series.key}|${test.dimension}|${test.value}`)) return;
    findings.push(finding(input, test, adjusted[i]!, tests.length));
  });
  return findings;
}

export const segmentsCheck: CheckModule<typeof options> = {
  id: 'segments',
  description:
    "Each value of each configured dimension on its own: people entering, end-to-end conversion and people per watched event against the value's usual share of the flow, false findings controlled across values x series x platforms (Benjamini-Hochberg).",
  options,
  messages,
  run,
};
