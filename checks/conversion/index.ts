/**
 * `conversion`: step-to-step and end-to-end conversion of a flow's funnel per
 * platform (and all platforms together), judged on the latest day against a
 * baseline of recent days, with binomial and day-to-day uncertainty and a
 * minimum practical effect.
 *
 * Method, for each transition (`funnel-rates.ts`) on each platform:
 * - The day is judged only once its cohort's conversion window has passed
 *   (`input.now` >= end of day + `conversion_window`); before that its funnel
 *   undercounts late finishers, so the check skips the day rather than hold
 *   back the other checks with a gate.
 * - Baseline: the `baseline_days` most recent earlier days with people at the
 *   step, leaving out calendar days and the days already judged anomalous for
 *   this series. It needs at least
 *   MIN_BASELINE_DAYS of them. Weekdays are not matched: a rate is a share of
 *   the people who got that far, so the weekly swing of traffic largely cancels
 *   out of it (the demo's rates show no weekday pattern), and 28 days hold each
 *   weekday four times, so the pool is balanced. Where rates do swing by
 *   weekday the spread below widens the band instead of raising findings; the
 *   `seasonal` check judges rates against their weekday profile.
 * - Spread: daily cohorts vary more than a binomial draw (traffic mix,
 *   campaigns), and large cohorts make the binomial part vanish while that
 *   day-to-day variation stays. Each day's rate has variance p (1 - p) / n +
 *   tau^2, tau^2 the between-day variance of the baseline days
 *   (DerSimonian-Laird), and the day is compared with their random-effects
 *   mean (`day-proportion.ts`, checked against R's metafor).
 * - Test: score = (day's rate - baseline mean) / sqrt(p (1 - p) / n + tau^2 +
 *   SE(mean)^2), one-sided for `direction` down or up, against the critical
 *   value at `sensitivity` / m: t on k - 1 degrees of freedom when the
 *   baseline days vary more than binomially (tau^2 estimated from k days), the
 *   normal when they do not. Multiple testing: m = transitions x (platforms +
 *   1) of the flow (Bonferroni), so the chance that an unchanged flow raises
 *   any conversion finding on a day is at most about `sensitivity`: with the
 *   default 0.001, one false finding per flow in 1,000 days, before the effect
 *   floor. (The earlier quasi-binomial test, z / sqrt(phi) against the normal,
 *   ran at about 4 times that with 28 days of large cohorts and 35 times with
 *   7: phi estimated from k - 1 degrees of freedom needs t.)
 * - Effect floor: the day must also differ from the baseline by at least
 *   `min_effect_pp` percentage points or by `min_effect_relative` of the
 *   baseline rate, whichever is smaller: large cohorts make tiny moves
 *   significant and those are not worth waking anyone for, while a step
 *   converting at 2% can never move 3 points yet falling to 0 is news.
 * - Volume floor: at least `min_people` people at the step's denominator on
 *   the day (fewer: the rate is not judged).
 * - All platforms together (platform null): judged only for a transition no
 *   single platform reported that day, so a move spread thin over every
 *   platform (a payment provider, a country) still shows, without repeating a
 *   one-platform incident. Its baseline leaves out the days any platform's
 *   series of that transition was anomalous.
 *
 * Finding: observed = the day's rate (fraction), expected = the baseline mean
 * with the band of rates that would not have been reported (the larger of the
 * effect floor and the critical value times the standard error); score as
 * above (signed, in standard errors). Evidence carries the counts, the
 * between-day standard deviation, the degrees of freedom and the interval of
 * the difference (day - baseline) on the verdict's own model: difference +-
 * critical x standard error, so it excludes 0 on the reported side exactly
 * when the test is significant (one-sided directions: the two-sided interval
 * at 1 - 2 x alpha, whose end on the reported side is the one-sided bound).
 */
import { z } from 'zod';
import { formatCount, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent, severity } from '../options.js';
import { baselineExclusions, excerpt } from '../series.js';
import { criticalValue, predictDayProportion } from '../stats/index.js';
import type { BandExceedance, CheckInput, CheckModule, Finding, WithPlatforms } from '../types.js';
import { HOLD_SHARE, anomalousSince, calendarSeverity } from '../findings.js';
import { conversionSettled, funnelTotals, rateSeries, transitions, type RateSeries, type Transition } from '../funnel.js';

/** Fewest usable baseline days for a judgement: one week, each weekday once. */
const MIN_BASELINE_DAYS = 7;
const EXCERPT_DAYS = 28;
/** Platform part of the series key of all platforms together. */
const ALL_PLATFORMS = 'all';

export const options = z.strictObject({
  /** Smallest change worth a finding, in percentage points of conversion ... */
  min_effect_pp: z.number().min(0).max(100).default(3),
  /** ... or as a share of the baseline rate, whichever is smaller (low rates: a step at 2% falling to 1%). */
  min_effect_relative: percent().default(0.5),
  /** Chance that an unchanged flow raises any conversion finding on a day (Bonferroni over transitions x (platforms + all together)). */
  sensitivity: z.number().gt(0).lt(1).default(0.001),
  /** Fewest people at the step's denominator on the day for its rate to be judged. */
  min_people: z.number().int().min(1).default(100),
  /** Earlier days pooled into the baseline (calendar and anomalous days left out). */
  baseline_days: z.number().int().min(MIN_BASELINE_DAYS).max(365).default(28),
  /** Which moves are reported: drops (one-sided test), rises, or both (two-sided). */
  direction: z.enum(['down', 'up', 'both']).default('down'),
  severity: severity('warn'),
});
type Options = z.output<typeof options>;

const messages = {
  drop: '{platform} {transition} conversion {observed} vs {expected} baseline (-{effect} pp, {people} people at {from_step}; usual range {low} to {high})',
  rise: '{platform} {transition} conversion {observed} vs {expected} baseline (+{effect} pp, {people} people at {from_step}; usual range {low} to {high})',
};

interface RateJudgement {
  observed: number;
  successes: number;
  trials: number;
  /** Random-effects mean of the baseline days' rates. */
  baseline: number;
  baselineSuccesses: number;
  baselineTrials: number;
  baselineDays: number;
  /** Between-day variance of the baseline days' rates. */
  tau2: number;
  /** Standard error of the day's rate minus the baseline. */
  se: number;
  /** Degrees of freedom of the critical value (Infinity: the normal). */
  df: number;
  score: number;
  critical: number;
  low: number;
  high: number;
  flagged: boolean;
  direction: 'up' | 'down';
}

/**
 * Judges day `index` of a rate series against the pooled baseline of the days
 * before it; undefined when the day is below the volume floor or the baseline
 * is too short. `leaveOut[i]` keeps day i out of the baseline.
 */
function judgeRate(series: RateSeries, index: number, leaveOut: readonly boolean[], o: Options, tests: number, share = 1): RateJudgement | undefined {
  const successes = series.successes[index]!;
  const trials = series.trials[index]!;
  if (!(trials >= o.min_people) || !(successes >= 0 && successes <= trials)) return undefined;
  const xs: number[] = [];
  const ns: number[] = [];
  for (let i = index - 1; i >= 0 && ns.length < o.baseline_days; i--) {
    const n = series.trials[i]!;
    const x = series.successes[i]!;
    if (leaveOut[i] || !(n > 0) || !(x >= 0 && x <= n)) continue;
    xs.push(x);
    ns.push(n);
  }
  if (ns.length < MIN_BASELINE_DAYS) return undefined;
  const baselineSuccesses = xs.reduce((a, b) => a + b, 0);
  const baselineTrials = ns.reduce((a, b) => a + b, 0);
  const predicted = predictDayProportion(xs, ns, successes, trials);
  const alpha = o.sensitivity / tests;
  const critical = criticalValue(o.direction === 'both' ? alpha / 2 : alpha, predicted.df);
  const observed = successes / trials;
  const baseline = predicted.center;
  const effect = observed - baseline;
  const se = Math.sqrt(predicted.variance);
  // The practical floor: points or a share of the baseline rate, whichever is reached first.
  const floor = Math.min(o.min_effect_pp / 100, o.min_effect_relative * baseline);
  // `share` < 1: the hysteresis band of an open incident's series (HOLD_SHARE of both thresholds).
  const halfWidth = share * Math.max(floor, critical * se);
  const direction = effect < 0 ? 'down' : 'up';
  const flagged = Math.abs(predicted.score) >= share * critical && Math.abs(effect) >= share * floor && (o.direction === 'both' || o.direction === direction);
  return {
    observed,
    successes,
    trials,
    baseline,
    baselineSuccesses,
    baselineTrials,
    baselineDays: ns.length,
    tau2: predicted.tau2,
    se,
    df: predicted.df,
    score: predicted.score,
    critical,
    low: Math.max(0, baseline - halfWidth),
    high: Math.min(1, baseline + halfWidth),
    flagged,
    direction,
  };
}

function finding(input: CheckInput, o: Options, platform: string | null, transition: Transition, series: RateSeries, judged: RateJudgement, leaveOut: boolean[], tests: number): Finding {
  const flow = input.flow;
  const seriesKey = seriesKeyOf(transition, platform);
  const last = input.days.length - 1;
  const rates = series.successes.map((x, i) => x / series.trials[i]!);
  const low = new Float64Array(input.days.length).fill(Number.NaN);
  const high = new Float64Array(input.days.length).fill(Number.NaN);
  for (let i = Math.max(0, last - EXCERPT_DAYS + 1); i <= last; i++) {
    const past = i === last ? judged : judgeRate(series, i, leaveOut, o, tests);
    if (past) [low[i], high[i]] = [past.low, past.high];
  }
  const flagged = new Set([...(input.anomalous[seriesKey] ?? []), input.day]);
  const { severity: findingSeverity, calendar } = calendarSeverity(input, judged.direction, o.severity);
  const effectPp = 100 * (judged.observed - judged.baseline);
  // The verdict's own interval of the difference (see the file comment).
  const difference = judged.observed - judged.baseline;
  const since = anomalousSince(input, seriesKey);
  const target = flow.steps[transition.to]!;
  return {
    check: 'conversion',
    kind: judged.direction === 'down' ? 'drop' : 'rise',
    flow: flow.id,
    subject: transition.endToEnd ? { type: 'flow', name: flow.id } : { type: 'step', name: target.name, step: target.name, event: target.event },
    metric: transition.endToEnd ? 'end_to_end_conversion' : 'conversion',
    platform,
    version: null,
    day: input.day,
    ...(since !== undefined ? { since } : {}),
    observed: judged.observed,
    expected: { low: judged.low, high: judged.high, center: judged.baseline },
    score: judged.score,
    direction: judged.direction,
    severity: findingSeverity,
    message: renderMessage(messages[judged.direction === 'down' ? 'drop' : 'rise'], {
      platform: platform ?? 'all platforms',
      transition: transition.label,
      observed: formatPercent(judged.observed),
      expected: formatPercent(judged.baseline),
      effect: Math.abs(effectPp).toFixed(1),
      people: formatCount(judged.trials),
      from_step: flow.steps[transition.from]!.name,
      low: formatPercent(judged.low),
      high: formatPercent(judged.high),
    }),
    seriesKey,
    excerpt: excerpt(input.days, rates, EXCERPT_DAYS, { low, high }, flagged),
    ...(calendar !== undefined ? { calendar } : {}),
    evidence: {
      successes: judged.successes,
      trials: judged.trials,
      baseline_successes: judged.baselineSuccesses,
      baseline_trials: judged.baselineTrials,
      baseline_days: judged.baselineDays,
      effect_pp: Number(effectPp.toFixed(2)),
      z: Number(judged.score.toFixed(3)),
      z_critical: Number(judged.critical.toFixed(3)),
      between_day_sd: Number(Math.sqrt(judged.tau2).toFixed(5)),
      df: Number.isFinite(judged.df) ? judged.df : null,
      tests,
      difference_low: difference - judged.critical * judged.se,
      difference_high: difference + judged.critical * judged.se,
    },
  };
}

/** Series key of one transition on a platform (`conversion:zone->rider:android:*`) or on all platforms together (`...:all:*`). */
function seriesKeyOf(transition: Transition, platform: string | null): string {
  return `conversion:${transition.key}:${platform ?? ALL_PLATFORMS}:*`;
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  if (!conversionSettled(input)) return [];
  const flow = input.flow;
  const list = transitions(flow);
  const tests = list.length * (flow.platforms.length + 1);
  const last = input.days.length - 1;
  const findings: Finding[] = [];
  const funnels = new Map(flow.platforms.map((platform) => [platform, funnelTotals(input, [platform])]));
  const together = funnelTotals(input, flow.platforms);
  for (const transition of list) {
    let platformFound = false;
    for (const platform of flow.platforms) {
      const o = optionsFor(all, platform);
      const series = rateSeries(input, funnels.get(platform)!, transition);
      const skip = baselineExclusions(seriesKeyOf(transition, platform), input.anomalous, input.calendar);
      const leaveOut = input.days.map((day) => skip.has(day));
      const judged = judgeRate(series, last, leaveOut, o, tests);
      if (!judged?.flagged) continue;
      platformFound = true;
      findings.push(finding(input, o, platform, transition, series, judged, leaveOut, tests));
    }
    // All platforms together speak only for a move no single platform shows: one spread thin over every platform
    // (a payment provider, a country) that each platform's smaller cohort cannot make significant on its own.
    if (platformFound) continue;
    const series = rateSeries(input, together, transition);
    const keys = [null, ...flow.platforms].map((platform) => seriesKeyOf(transition, platform));
    const skip = new Set(keys.flatMap((key) => [...baselineExclusions(key, input.anomalous, input.calendar)]));
    const leaveOut = input.days.map((day) => skip.has(day));
    const judged = judgeRate(series, last, leaveOut, all, tests);
    if (judged?.flagged) findings.push(finding(input, all, null, transition, series, judged, leaveOut, tests));
  }
  return findings;
}

/**
 * Hysteresis: the open series (`input.open`) whose day is still beyond half of
 * both thresholds (the critical value and the effect floor), in the direction
 * the options report; the pipeline keeps the ones `run` did not report.
 */
function outside(input: CheckInput, all: WithPlatforms<Options>): BandExceedance[] {
  const open = new Set(input.open ?? []);
  if (open.size === 0 || !conversionSettled(input)) return [];
  const flow = input.flow;
  const list = transitions(flow);
  const tests = list.length * (flow.platforms.length + 1);
  const last = input.days.length - 1;
  const exceedances: BandExceedance[] = [];
  for (const transition of list) {
    for (const platform of [...flow.platforms, null]) {
      const seriesKey = seriesKeyOf(transition, platform);
      if (!open.has(seriesKey)) continue;
      const o = platform === null ? all : optionsFor(all, platform);
      const series = rateSeries(input, funnelTotals(input, platform === null ? flow.platforms : [platform]), transition);
      const skip = baselineExclusions(seriesKey, input.anomalous, input.calendar);
      const judged = judgeRate(series, last, input.days.map((day) => skip.has(day)), o, tests, HOLD_SHARE);
      if (!judged?.flagged) continue;
      exceedances.push({ check: 'conversion', flow: flow.id, seriesKey, platform, direction: judged.direction, observed: judged.observed, expected: { low: judged.low, high: judged.high, center: judged.baseline } });
    }
  }
  return exceedances;
}

export const conversionCheck: CheckModule<typeof options> = {
  id: 'conversion',
  description: 'Step-to-step and end-to-end funnel conversion per platform against its recent baseline, with binomial and day-to-day uncertainty and a minimum practical effect.',
  options,
  messages,
  run,
  outside,
  needsHistory: true,
};
