/**
 * `parity`: each platform against the others. A platform's share of the
 * flow's entrants and its step-to-step conversion keep a stable relation to
 * the other platforms'; a day where one platform departs from its usual
 * relation while the others do not is a tracking or platform problem, not
 * customer behaviour. And a step or event that a platform used to send and
 * the others still send, but that this platform no longer sends, is reported
 * as absent.
 *
 * Ratio metrics (divergence.ts), from the funnel rows of all versions
 * (version `*`, no dimension): entrants (people entering at step 1, or at any
 * step with `entry: any_step`) and each step-to-step conversion (reached[i] /
 * reached[i-1], less those who entered at step i with `any_step`). A platform
 * is reported when its divergence from the median platform's move, against
 * its own baseline of the last `baseline_days` days (calendar and anomalous
 * days left out), changes its usual ratio to the others by at least
 * `tolerance` (relative) with a robust z of at least `min_score`, and the
 * platform itself moved that way against its own habit (with two platforms,
 * that says which of the two diverged). A move on every platform at once
 * cancels out. Floors: a platform with fewer than `min_people` people at the
 * step's denominator (or entrants) that day takes no part; a day without
 * funnel rows is unknown, not zero.
 *
 * Absence: a step (step counts, any order) or watched event with at most 1%
 * of its usual people on a platform that is otherwise sending events, where
 * its usual median is at least `min_people` and at least one other platform
 * sends it today with `min_people` or more. It replaces the ratio findings it
 * explains (conversion into and out of an absent step, the entrant share
 * when step 1 is absent).
 *
 * Scores: share and conversion: the robust z of the divergence (signed,
 * negative when the platform fell behind the others). absent_step and
 * absent_event: minus the share of the usual people lost (-1 when none
 * arrive).
 */
import { z } from 'zod';
import { formatCount, formatNumber, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent, severity } from '../options.js';
import { baselineExclusions, excerpt } from '../series.js';
import { robustLocationScale } from '../stats/index.js';
import { ALL_VERSIONS, type BandExceedance, type CheckInput, type CheckModule, type Finding, type FlowStep, type WithPlatforms } from '../types.js';
import { MIN_BASELINE_DAYS, divergence, type PlatformSeries } from './divergence.js';
import { HOLD_SHARE, anomalousSince, calendarSeverity, exceedanceOf } from '../findings.js';

const EXCERPT_DAYS = 28;
/** A step or event counts as absent at or below this share of its usual people (a few stragglers from cached clients). */
const ABSENT_SHARE = 0.01;

export const options = z.strictObject({
  severity: severity('warn').describe('Severity of a platform diverging from the others or no longer sending a step or event.'),
  tolerance: percent().default(0.15).describe("Smallest relative change of a platform's usual ratio to the others worth a finding."),
  min_people: z.number().int().min(1).default(50).describe("Fewest people at a step's denominator (or entrants) for a platform to take part that day."),
  baseline_days: z
    .number()
    .int()
    .min(MIN_BASELINE_DAYS)
    .max(365)
    .default(28)
    .describe("Earlier days a platform's habit and its usual ratio to the others are learnt from (flow-wide: platforms are compared on the same days)."),
  min_score: z.number().positive().default(4).describe('Robust z-score a divergence must reach.'),
});
type Options = z.output<typeof options>;

const messages = {
  share:
    '{platform} share of {flow} entrants diverged from {others}: {observed} entrants vs {expected} expected from their move ({low} to {high}), {change} against its usual ratio to them',
  conversion:
    '{platform} {transition} conversion diverged from {others}: {observed} vs {expected} expected from their move ({low} to {high}), {change} against its usual ratio to them',
  absent_step: '{platform} stopped sending the {step} step ({event}) while {others} still do: {observed} people, usually {expected}',
  absent_event: '{platform} stopped sending {event} while {others} still do: {observed} people, usually {expected}',
};

interface Counts {
  x: number;
  n: number;
}

/** A ratio metric: per platform and day, successes over trials (entrants: x over itself). */
interface Metric {
  id: string;
  kind: 'share' | 'conversion';
  /** Step the metric leads to (its subject), -1 for the flow's entrants. */
  step: number;
  counts: Map<string, Array<Counts | undefined>>;
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const absences = absentFindings(input, all);
  const absentSteps = new Map<string, Set<number>>();
  for (const finding of absences) {
    if (finding.platform === null) continue;
    // An absent event takes every step defined on it along.
    const explains = (step: FlowStep) => finding.subject.step === step.name || (finding.kind === 'absent_event' && step.event === finding.subject.event);
    const steps = input.flow.steps.flatMap((step, k) => (explains(step) ? [k] : []));
    if (!absentSteps.has(finding.platform)) absentSteps.set(finding.platform, new Set());
    for (const k of steps) absentSteps.get(finding.platform)!.add(k);
  }

  return [...absences, ...ratioFindings(input, all, absentSteps, 1)];
}

/**
 * The share and conversion findings, at `share` of the thresholds (1: the
 * findings; HOLD_SHARE: the hysteresis band), of the series in `only` when given.
 */
function ratioFindings(input: CheckInput, all: WithPlatforms<Options>, absentSteps: ReadonlyMap<string, Set<number>>, share: number, only?: ReadonlySet<string>): Finding[] {
  const platforms = input.flow.platforms;
  const days = input.days;
  const today = days.length - 1;
  const window = baselineWindow(days.length, all.baseline_days);
  const findings: Finding[] = [];
  for (const metric of ratioMetrics(input)) {
    const series: PlatformSeries[] = platforms.map((platform) => {
      const o = optionsFor(all, platform);
      const log = new Float64Array(days.length).fill(Number.NaN);
      const se = new Float64Array(days.length).fill(Number.NaN);
      metric.counts.get(platform)?.forEach((counts, i) => {
        if (!counts || counts.n < o.min_people) return;
        if (metric.kind === 'share') {
          log[i] = Math.log(counts.x);
          se[i] = 1 / Math.sqrt(counts.x);
        } else {
          // Continuity-corrected proportion: finite at 0 and at n.
          const x = counts.x + 0.5;
          const n = counts.n + 1;
          log[i] = Math.log(x / n);
          se[i] = Math.sqrt(1 / x - 1 / n);
        }
      });
      return { platform, log, se, excluded: baselineExclusions(seriesKey(metric, platform), input.anomalous, input.calendar) };
    });
    for (const platform of platforms) {
      if (only && !only.has(seriesKey(metric, platform))) continue;
      const explained = absentSteps.get(platform);
      if (explained && (explained.has(metric.step) || explained.has(metric.step - 1) || (metric.kind === 'share' && explained.has(0)))) continue;
      const base = optionsFor(all, platform);
      const o = { ...base, tolerance: base.tolerance * share, min_score: base.min_score * share };
      const result = divergence(series, platform, days, window);
      if (!result) continue;
      const tooLow = result.divergence <= Math.log(1 - o.tolerance);
      const tooHigh = result.divergence >= Math.log(1 + o.tolerance);
      const significant = Math.abs(result.z) >= o.min_score;
      // The platform itself moved that way against its habit: with two platforms this tells which one diverged.
      const ownMove = Math.sign(result.own) === Math.sign(result.divergence) && Math.abs(result.own) >= Math.abs(result.divergence) / 2;
      if (!(tooLow || tooHigh) || !significant || !ownMove) continue;
      const others = series.filter((s) => s.platform !== platform && Number.isFinite(s.log[today]!)).map((s) => s.platform);
      findings.push(ratioFinding(input, o, metric, platform, others, result, today));
    }
  }
  return findings;
}

/**
 * Hysteresis: the open series (`input.open`) of shares and conversions still
 * beyond half of both thresholds (tolerance and score); the pipeline keeps the
 * ones `run` did not report.
 */
function outside(input: CheckInput, all: WithPlatforms<Options>): BandExceedance[] {
  const open = new Set(input.open ?? []);
  if (open.size === 0) return [];
  return ratioFindings(input, all, new Map(), HOLD_SHARE, open).flatMap((f) => exceedanceOf(f) ?? []);
}

/** Indices of the `baselineDays` days before the judged day. */
function baselineWindow(length: number, baselineDays: number): number[] {
  const window: number[] = [];
  for (let i = Math.max(0, length - 1 - baselineDays); i < length - 1; i++) window.push(i);
  return window;
}

function seriesKey(metric: Metric, platform: string): string {
  return `parity:${metric.kind}:${metric.id}:${platform}:${ALL_VERSIONS}`;
}

/** Entrants and every step-to-step conversion, per platform and day, from the funnel rows of all versions. */
function ratioMetrics(input: CheckInput): Metric[] {
  const { steps } = input.flow;
  const index = new Map(input.days.map((day, i) => [day, i]));
  const rows = new Map<string, { entered: number[]; reached: number[] }>();
  for (const row of input.funnel) {
    if (row.version !== ALL_VERSIONS || row.dimension !== '' || row.flow !== input.flow.id) continue;
    const id = `${row.platform}\u0000${row.day}`;
    if (!rows.has(id)) rows.set(id, { entered: new Array<number>(steps.length).fill(0), reached: new Array<number>(steps.length).fill(0) });
    const entry = rows.get(id)!;
    entry.entered[row.step] = row.entered;
    entry.reached[row.step] = row.reached;
  }
  const anyStep = input.flow.entry === 'any_step';
  const metrics: Metric[] = [
    { id: 'entrants', kind: 'share', step: -1, counts: new Map() },
    ...steps.slice(1).map((step, k) => ({ id: `${steps[k]!.name}>${step.name}`, kind: 'conversion' as const, step: k + 1, counts: new Map() })),
  ];
  for (const [id, entry] of rows) {
    const [platform, day] = id.split('\u0000') as [string, string];
    const i = index.get(day);
    if (i === undefined) continue;
    const entrants = anyStep ? entry.entered.reduce((sum, v) => sum + v, 0) : entry.reached[0]!;
    for (const metric of metrics) {
      if (!metric.counts.has(platform)) metric.counts.set(platform, new Array<Counts | undefined>(input.days.length));
      const s = metric.step;
      const counts: Counts =
        metric.kind === 'share'
          ? { x: entrants, n: entrants }
          : { x: Math.max(0, entry.reached[s]! - (anyStep ? entry.entered[s]! : 0)), n: entry.reached[s - 1]! };
      metric.counts.get(platform)![i] = counts;
    }
  }
  return metrics;
}

function ratioFinding(
  input: CheckInput,
  o: Options,
  metric: Metric,
  platform: string,
  others: string[],
  result: NonNullable<ReturnType<typeof divergence>>,
  today: number,
): Finding {
  const key = seriesKey(metric, platform);
  const counts = metric.counts.get(platform)!;
  const value = (c: Counts | undefined) => (c === undefined || c.n === 0 ? Number.NaN : metric.kind === 'share' ? c.x : c.x / c.n);
  const values = input.days.map((_, i) => value(counts[i]));
  // Back from the log scale (the continuity correction is negligible at the volume floor).
  const low = Math.min(1 - o.tolerance, Math.exp(-o.min_score * result.sd));
  const high = Math.max(1 + o.tolerance, Math.exp(o.min_score * result.sd));
  const cap = metric.kind === 'conversion' ? 1 : Infinity;
  const expected = Array.from(result.expectedLog, Math.exp);
  const band = { low: expected.map((e) => e * low), high: expected.map((e) => Math.min(cap, e * high)) };
  const center = expected[today]!;
  const direction = result.divergence < 0 ? 'down' : 'up';
  const { severity: level, calendar } = calendarSeverity(input, direction, o.severity);
  const steps = input.flow.steps;
  const step: FlowStep | undefined = metric.step >= 0 ? steps[metric.step] : undefined;
  const flagged = new Set(input.anomalous[key] ?? []);
  flagged.add(input.day);
  const since = anomalousSince(input, key);
  const show = (v: number) => (metric.kind === 'share' ? formatCount(v) : formatPercent(v));
  const change = Math.exp(result.divergence) - 1;
  const message = renderMessage(messages[metric.kind], {
    platform,
    flow: input.flow.id,
    others: others.join('/'),
    transition: step ? `${steps[metric.step - 1]!.name}→${step.name}` : '',
    observed: show(values[today]!),
    expected: show(center),
    low: show(band.low[today]!),
    high: show(band.high[today]!),
    change: `${change >= 0 ? '+' : ''}${formatPercent(change, 0)}`,
  });
  const day = counts[today]!;
  return {
    check: 'parity',
    kind: metric.kind,
    flow: input.flow.id,
    subject: step ? { type: 'step', name: step.name, step: step.name, event: step.event } : { type: 'flow', name: input.flow.id },
    metric: metric.kind === 'share' ? 'entrants' : 'conversion',
    platform,
    version: null,
    day: input.day,
    ...(since !== undefined ? { since } : {}),
    observed: values[today]!,
    expected: { low: band.low[today]!, high: band.high[today]!, center },
    score: result.z,
    direction,
    severity: level,
    message,
    seriesKey: key,
    excerpt: excerpt(input.days, values, EXCERPT_DAYS, band, flagged),
    ...(calendar !== undefined ? { calendar } : {}),
    evidence: {
      successes: metric.kind === 'share' ? null : day.x,
      trials: metric.kind === 'share' ? day.x : day.n,
      ratio_change: change,
      own_move: Math.exp(result.own) - 1,
      others_move: Math.exp(result.consensus) - 1,
      robust_sd: result.sd,
      baseline_days: result.baselineDays,
      others: others.join(', '),
    },
  };
}

/** Steps (any order) and watched events a platform stopped sending while the others go on. */
function absentFindings(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const days = input.days;
  const today = days.length - 1;
  const index = new Map(days.map((day, i) => [day, i]));
  const platforms = input.flow.platforms;
  // A platform is active on a day when it sent any watched event: only then does a missing step or event mean 0.
  const active = new Map(platforms.map((p) => [p, new Set<number>()]));
  const eventPeople = new Map<string, Float64Array>();
  const stepPeople = new Map<string, Float64Array>();
  const at = (map: Map<string, Float64Array>, id: string) => {
    if (!map.has(id)) map.set(id, new Float64Array(days.length));
    return map.get(id)!;
  };
  for (const row of input.events) {
    const i = index.get(row.day);
    if (i === undefined || row.version !== ALL_VERSIONS || row.dimension !== '' || !active.has(row.platform)) continue;
    if (row.events > 0) active.get(row.platform)!.add(i);
    at(eventPeople, `${row.event}\u0000${row.platform}`)[i] = row.people;
  }
  for (const row of input.steps) {
    const i = index.get(row.day);
    if (i === undefined || row.version !== ALL_VERSIONS || !active.has(row.platform)) continue;
    at(stepPeople, `${row.step}\u0000${row.platform}`)[i] = row.people;
  }
  const window = baselineWindow(days.length, all.baseline_days);
  const findings: Finding[] = [];
  const judge = (subject: { kind: 'absent_step' | 'absent_event'; id: string; step?: FlowStep }, people: (platform: string) => Float64Array | undefined) => {
    for (const platform of platforms) {
      if (!active.get(platform)!.has(today)) continue;
      const o = optionsFor(all, platform);
      const key = `parity:${subject.kind === 'absent_step' ? 'absent-step' : 'absent-event'}:${subject.id}:${platform}:${ALL_VERSIONS}`;
      const excluded = baselineExclusions(key, input.anomalous, input.calendar);
      const own = people(platform) ?? new Float64Array(days.length);
      const usual = window.filter((i) => active.get(platform)!.has(i) && !excluded.has(days[i]!)).map((i) => own[i]!);
      if (usual.length < MIN_BASELINE_DAYS) continue;
      const { center, scale } = robustLocationScale(usual);
      if (center < o.min_people || own[today]! > ABSENT_SHARE * center) continue;
      const others = platforms.filter((p) => p !== platform && active.get(p)!.has(today) && (people(p)?.[today] ?? 0) >= optionsFor(all, p).min_people);
      if (others.length === 0) continue;
      const values = days.map((_, i) => (active.get(platform)!.has(i) ? own[i]! : Number.NaN));
      const expected = { low: Math.max(0, center - 3 * scale), high: center + 3 * scale, center };
      const { severity: level, calendar } = calendarSeverity(input, 'down', o.severity);
      const since = anomalousSince(input, key);
      const flagged = new Set(input.anomalous[key] ?? []);
      flagged.add(input.day);
      const event = subject.step?.event ?? subject.id;
      findings.push({
        check: 'parity',
        kind: subject.kind,
        flow: input.flow.id,
        subject: subject.step ? { type: 'step', name: subject.step.name, step: subject.step.name, event } : { type: 'event', name: event, event },
        metric: 'people',
        platform,
        version: null,
        day: input.day,
        ...(since !== undefined ? { since } : {}),
        observed: own[today]!,
        expected,
        score: -(1 - own[today]! / center),
        direction: 'down',
        severity: level,
        message: renderMessage(messages[subject.kind], {
          platform,
          others: others.join('/'),
          step: subject.step?.name ?? '',
          event,
          observed: formatCount(own[today]!),
          expected: formatNumber(center),
        }),
        seriesKey: key,
        excerpt: excerpt(days, values, EXCERPT_DAYS, { low: values.map(() => expected.low), high: values.map(() => expected.high) }, flagged),
        ...(calendar !== undefined ? { calendar } : {}),
        evidence: { usual_median: center, usual_days: usual.length, others: others.join(', '), others_people: others.map((p) => people(p)![today]!).join(', ') },
      });
    }
  };
  const absentEvents = new Set<string>();
  for (const event of input.flow.events) {
    const before = findings.length;
    judge({ kind: 'absent_event', id: event }, (platform) => eventPeople.get(`${event}\u0000${platform}`));
    for (const finding of findings.slice(before)) absentEvents.add(`${event}\u0000${finding.platform}`);
  }
  input.flow.steps.forEach((step, k) => {
    const before = findings.length;
    judge({ kind: 'absent_step', id: step.name, step }, (platform) => stepPeople.get(`${k}\u0000${platform}`));
    // A step whose whole event is absent is explained by the event finding.
    const added = findings.splice(before);
    findings.push(...added.filter((finding) => !absentEvents.has(`${step.event}\u0000${finding.platform}`)));
  });
  return findings;
}

export const parityCheck: CheckModule<typeof options> = {
  id: 'parity',
  description: "Each platform's entrant share and step conversion against the other platforms, and steps or events one platform stopped sending.",
  options,
  messages,
  run,
  outside,
  needsHistory: true,
};

