/**
 * `conversion`: step-to-step and end-to-end conversion of a flow's funnel per
 * platform (and all platforms together), judged on the latest day against a
 * pooled baseline of recent days, with binomial uncertainty and a minimum
 * practical effect.
 *
 * Method, for each transition (`funnel-rates.ts`) on each platform:
 * - The day is judged only once its cohort's conversion window has passed
 *   (`input.now` >= end of day + `conversion_window`); before that its funnel
 *   undercounts late finishers, so the check skips the day rather than hold
 *   back the other checks with a gate.
 * - Baseline: the `baseline_days` most recent earlier days with people at the
 *   step, leaving out calendar days and the days already judged anomalous for
 *   this series; their successes and trials are pooled. It needs at least
 *   MIN_BASELINE_DAYS of them. Weekdays are not matched: a rate is a share of
 *   the people who got that far, so the weekly swing of traffic largely cancels
 *   out of it (the demo's rates show no weekday pattern), and 28 days hold each
 *   weekday four times, so the pool is balanced. Where rates do swing by
 *   weekday the spread below widens the band instead of raising findings; the
 *   `seasonal` check judges rates against their weekday profile.
 * - Spread: daily cohorts may vary more than a binomial draw (traffic mix,
 *   campaigns). The dispersion factor phi = max(1, Pearson chi-square / df) of
 *   the baseline days' 2 x k table (chi-square-homogeneity.ts) scales the
 *   variance: the quasi-binomial correction (P. McCullagh and J. A. Nelder
 *   1989, "Generalized Linear Models", 2nd ed., section 4.5 on
 *   over-dispersion; section cited from memory).
 * - Test: pooled two-proportion z-test of the day against the baseline
 *   (two-proportion-z.ts), z / sqrt(phi) against the normal critical value at
 *   `sensitivity` / m, one-sided for `direction` down or up. Multiple testing:
 *   m = transitions x (platforms + 1) of the flow (Bonferroni), so the chance
 *   that an unchanged flow raises any conversion finding on a day is at most
 *   `sensitivity` under the binomial model: with the default 0.001, about one
 *   false finding per flow in 1,000 days, before the effect floor. Measured on
 *   eight generated demo variants (seeds 7, 11, 12, 13, with and without
 *   incidents; 2 flows x 124 days each): 2 distinct false findings in the 4
 *   seeds' 992 flow-days, both at |z| of 4.0 to 4.6.
 * - Effect floor: the day must also differ from the baseline by at least
 *   `min_effect_pp` percentage points; large cohorts make tiny moves
 *   significant, and those are not worth waking anyone for.
 * - Volume floor: at least `min_people` people at the step's denominator on
 *   the day (fewer: the rate is not judged).
 * - All platforms together (platform null): judged only for a transition no
 *   single platform reported that day, so a move spread thin over every
 *   platform (a payment provider, a country) still shows, without repeating a
 *   one-platform incident. Its baseline leaves out the days any platform's
 *   series of that transition was anomalous.
 *
 * Finding: observed = the day's rate (fraction), expected = the baseline rate
 * with the band of rates that would not have been reported (the larger of the
 * effect floor and the critical z times the standard error, using the baseline
 * rate's variance); score = z / sqrt(phi) (signed, in standard errors);
 * evidence carries the counts, the day's Wilson interval and the Newcombe
 * interval of the difference, both at the Bonferroni-adjusted level.
 */
import { z } from 'zod';
import { formatCount, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, severity } from '../options.js';
import { baselineExclusions, excerpt } from '../series.js';
import { chiSquareHomogeneity, newcombeDifference, twoProportionZ, wilson, zForConfidence } from '../stats/index.js';
import type { CheckInput, CheckModule, Finding, WithPlatforms } from '../types.js';
import { anomalousSince, calendarSeverity } from '../findings.js';
import { conversionSettled, funnelTotals, rateSeries, transitions, type RateSeries, type Transition } from '../funnel.js';

/** Fewest usable baseline days for a judgement: one week, each weekday once. */
const MIN_BASELINE_DAYS = 7;
const EXCERPT_DAYS = 28;
/** Platform part of the series key of all platforms together. */
const ALL_PLATFORMS = 'all';

export const options = z.strictObject({
  /** Smallest change worth a finding, in percentage points of conversion. */
  min_effect_pp: z.number().min(0).max(100).default(3),
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
  baseline: number;
  baselineSuccesses: number;
  baselineTrials: number;
  baselineDays: number;
  /** Dispersion factor of the baseline days, >= 1. */
  phi: number;
  /** z / sqrt(phi). */
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
function judgeRate(series: RateSeries, index: number, leaveOut: readonly boolean[], o: Options, tests: number): RateJudgement | undefined {
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
  const baseline = baselineSuccesses / baselineTrials;
  const homogeneity = chiSquareHomogeneity(xs, ns);
  const phi = Math.max(1, homogeneity.statistic / homogeneity.df);
  const alpha = o.sensitivity / tests;
  const critical = zForConfidence(o.direction === 'both' ? 1 - alpha : 1 - 2 * alpha);
  const score = twoProportionZ(successes, trials, baselineSuccesses, baselineTrials).z / Math.sqrt(phi);
  const observed = successes / trials;
  const effect = observed - baseline;
  const halfWidth = Math.max(o.min_effect_pp / 100, critical * Math.sqrt(phi * baseline * (1 - baseline) * (1 / trials + 1 / baselineTrials)));
  const direction = effect < 0 ? 'down' : 'up';
  const flagged =
    Math.abs(score) >= critical && Math.abs(effect) * 100 >= o.min_effect_pp && (o.direction === 'both' || o.direction === direction);
  return {
    observed,
    successes,
    trials,
    baseline,
    baselineSuccesses,
    baselineTrials,
    baselineDays: ns.length,
    phi,
    score,
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
  const adjusted = 1 - o.sensitivity / tests;
  const dayInterval = wilson(judged.successes, judged.trials, adjusted);
  const difference = newcombeDifference(judged.successes, judged.trials, judged.baselineSuccesses, judged.baselineTrials, adjusted);
  const effectPp = 100 * (judged.observed - judged.baseline);
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
      dispersion: Number(judged.phi.toFixed(3)),
      tests,
      day_low: dayInterval.low,
      day_high: dayInterval.high,
      difference_low: difference.low,
      difference_high: difference.high,
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

export const conversionCheck: CheckModule<typeof options> = {
  id: 'conversion',
  description: 'Step-to-step and end-to-end funnel conversion per platform against its recent baseline, with binomial uncertainty and a minimum practical effect.',
  options,
  messages,
  run,
};
