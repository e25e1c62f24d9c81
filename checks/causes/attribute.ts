/**
 * The likely cause of one finding, tested in order of evidence: data delay,
 * release, platform, segment, calendar, behaviour. The first test that passes
 * labels the finding; each returns its numbers.
 */
import normalCdf from '@stdlib/stats-base-dists-normal-cdf';
import { formatCount, formatNumber, formatPercent } from '../messages.js';
import { explain, scoreValues, type ValueChange } from '../stats/explanatory-power.js';
import { rateComparison } from '../stats/rate-comparison.js';
import { twoProportionZ } from '../stats/two-proportion-z.js';
import { weekday } from '../time.js';
import { ALL_VERSIONS, type CheckInput, type Day, type Finding } from '../types.js';
import { LOST_DATA_THRESHOLDS, lostData } from './lost-data.js';
import type { Cause } from './types.js';
import {
  acrossSlices,
  baselineDays,
  baselineOf,
  causeMeasureOf,
  dimensionValues,
  isCount,
  dimensionsIn,
  firstSeen,
  localisedStep,
  measureOn,
  rate,
  versionsOn,
  type Measure,
  type Ratio,
  type Slice,
} from './measures.js';

/** Thresholds of the cause tests; our heuristics, documented in checks/causes/README.md. */
export const CAUSE_THRESHOLDS = {
  /** A version must differ from the rest of its platform at least this surely (p-value). */
  releasePValue: 1e-6,
  /** ... and the rest of the platform must carry at most this share of the platform's change. */
  restShareOfChange: 0.35,
  /** Fewest people in a version (its denominator) to be compared at all. */
  minVersionPeople: 30,
  /** Other platforms must have moved at most this share of the finding platform's relative change. */
  otherPlatformsShare: 1 / 3,
  /** A segment's values must explain at least this share of the change (Adtributor T_EP). */
  segmentMinEp: 0.67,
  /** ... while the other values moved at most this share of the segment's relative change. */
  segmentRestShare: 1 / 3,
  /** At most this many values in a segment explanation (a set of many is no explanation). */
  segmentMaxValues: 2,
  /** Share of watched events x platforms with volume findings for "everything moved together". */
  movedTogetherShare: 0.75,
  /**
   * A platform's or a segment's move must be at least this many standard errors from its usual level: the day's
   * forecast (weekday-matched for counts) and an overdispersed error (`expectation`). Common practice (three sigma).
   */
  minZ: 3,
};

/** Measures a count may exceed its exposure in: compared as rates, not proportions. */
function isRateMeasure(measure: Measure): boolean {
  return measure.kind === 'event_people' || measure.kind === 'events_per_person' || measure.kind === 'step_people';
}

/** qnorm(0.9): a log-normal's 90th percentile sits this many sigma above its median. */
const Z90 = 1.2815515655446004;
/** pi / 2: a sample median's variance over the mean's under normality (H. Cramér 1946, section 28.5; cited from memory). */
const MEDIAN_VARIANCE = Math.PI / 2;

/** Variance of a day's mean log median time: (pi/2) sigma^2 / timed people, sigma from ln(p90 / median) / qnorm(0.9). */
function logMedianVariance(ratio: Ratio): number {
  if (!(ratio.den > 0)) return Number.NaN;
  const sigma = (ratio.spread ?? 0) / ratio.den / Z90;
  return (MEDIAN_VARIANCE * sigma * sigma) / ratio.den;
}

/**
 * The judged day's value of a measure in a slice, what it was expected to be,
 * and the variance of the difference (the cause tests' "standard errors"):
 * - counts: the mean of the same weekday among the baseline days (all of them
 *   with fewer than two such days), quasi-Poisson variance phi x mean x
 *   (1 + 1/k), phi the Pearson chi-square of the baseline days around their
 *   own weekdays' means over its degrees of freedom (P. McCullagh and J. A.
 *   Nelder 1989, "Generalized Linear Models", 2nd ed., section 4.5; cited from
 *   memory), at least 1;
 * - ratios of people: today's denominator at the baseline rate, binomial
 *   (proportions) or Poisson (counts that may exceed their exposure) variance
 *   times (1 + today's denominator / the baseline's), times phi likewise;
 * - step times: the baseline's mean log median, the variance of today's and
 *   the baseline's log medians (`logMedianVariance`), times phi likewise.
 */
function expectation(input: CheckInput, measure: Measure, slice: Slice, days: readonly Day[]): { value: number; forecast: number; variance: number } {
  const today = measureOn(input, measure, input.day, slice);
  const history = days.map((day) => ({ day, ratio: measureOn(input, measure, day, slice) }));
  if (isCount(measure)) {
    const byWeekday = new Map<number, number[]>();
    for (const { day, ratio } of history) byWeekday.set(weekday(day), [...(byWeekday.get(weekday(day)) ?? []), ratio.num]);
    const mean = (values: readonly number[]) => values.reduce((a, b) => a + b, 0) / values.length;
    const same = byWeekday.get(weekday(input.day)) ?? [];
    const pool = same.length >= 2 ? same : history.map((h) => h.ratio.num);
    let chi = 0;
    for (const values of byWeekday.values()) {
      const m = mean(values);
      for (const v of values) chi += (v - m) ** 2 / Math.max(m, 1);
    }
    const df = history.length - byWeekday.size;
    const phi = df >= 1 ? Math.max(1, chi / df) : 1;
    const forecast = pool.length > 0 ? mean(pool) : Number.NaN;
    return { value: today.num, forecast, variance: phi * Math.max(forecast, 1) * (1 + 1 / Math.max(pool.length, 1)) };
  }
  const usual = baselineOf(input, measure, slice, days);
  const used = history.filter((h) => h.ratio.den > 0);
  if (measure.kind === 'step_seconds') {
    const center = rate(usual);
    const unit = logMedianVariance(usual) * usual.den;
    const chi = used.reduce((sum, h) => sum + (rate(h.ratio) - center) ** 2 / logMedianVariance(h.ratio), 0);
    const phi = used.length >= 2 && Number.isFinite(chi) ? Math.max(1, chi / (used.length - 1)) : 1;
    return { value: rate(today), forecast: center, variance: phi * (unit / today.den + unit / usual.den) };
  }
  const r = rate(usual);
  const cell = (den: number) => (isRateMeasure(measure) ? den * r : den * r * (1 - r));
  const chi = used.reduce((sum, h) => sum + (cell(h.ratio.den) > 0 ? (h.ratio.num - h.ratio.den * r) ** 2 / cell(h.ratio.den) : 0), 0);
  const phi = used.length >= 2 ? Math.max(1, chi / (used.length - 1)) : 1;
  return { value: today.num, forecast: today.den * r, variance: phi * cell(today.den) * (1 + today.den / usual.den) };
}

/** How many standard errors the day's value sits from its forecast (0 without a usable forecast or spread). */
function changeZ(input: CheckInput, measure: Measure, slice: Slice, days: readonly Day[]): number {
  const { value, forecast, variance } = expectation(input, measure, slice, days);
  const z = (value - forecast) / Math.sqrt(variance);
  return Number.isFinite(z) ? z : 0;
}

function compare(measure: Measure, a: Ratio, b: Ratio): { z: number; pValue: number } {
  if (measure.kind === 'step_seconds') {
    // Log median times: normal with the medians' variances (Cramér's asymptotic variance of the median).
    const z = (rate(a) - rate(b)) / Math.sqrt(logMedianVariance(a) + logMedianVariance(b));
    return Number.isFinite(z) ? { z, pValue: 2 * normalCdf(-Math.abs(z), 0, 1) } : { z: 0, pValue: 1 };
  }
  if (isRateMeasure(measure)) return rateComparison(a.num, a.den, b.num, b.den);
  return twoProportionZ(Math.round(a.num), Math.round(a.den), Math.round(b.num), Math.round(b.den));
}

const all = (platform: string | null): Slice => ({ platform, version: ALL_VERSIONS, dimension: '', value: '' });

/** Relative change of the measure on the judged day against its forecast (a count: its weekday's), in a slice. */
function relativeChange(input: CheckInput, measure: Measure, slice: Slice, days: readonly string[]): number {
  if (isCount(measure)) {
    const { value, forecast } = expectation(input, measure, slice, days);
    return forecast > 0 ? value / forecast - 1 : Number.NaN;
  }
  const today = rate(measureOn(input, measure, input.day, slice));
  const usual = rate(baselineOf(input, measure, slice, days));
  if (measure.kind === 'step_seconds') return Number.isFinite(today - usual) ? Math.exp(today - usual) - 1 : Number.NaN;
  return usual > 0 && Number.isFinite(today) ? today / usual - 1 : Number.NaN;
}

/** A ratio as the reader knows it: a time in seconds (from the mean log median), else the rate. */
function level(measure: Measure, ratio: Ratio): number {
  return measure.kind === 'step_seconds' ? Math.exp(rate(ratio)) : rate(ratio);
}

export interface Attribution {
  cause: Cause;
  /** Keys that decide which findings share an incident. */
  groupKey: string;
}

export function attribute(finding: Finding, input: CheckInput, dayFindings: readonly Finding[]): Attribution {
  // A `segments` finding already judges one value by its share of its dimension on the same platform and day:
  // a release, a platform or a pipeline fault moves every value alike and never shows there.
  if (finding.check === 'segments') return calendar(finding, input) ?? namedSegment(finding, input) ?? behaviour(finding, input);
  const delayed = dataDelay(finding, input, dayFindings);
  if (delayed) return delayed;
  // A finding about every platform at once is first placed on the platform that moved, if one did: the tests
  // below then ask that platform's versions, as they would a finding of its own.
  const placed = finding.platform === null ? movedPlatform(finding, input) : undefined;
  const own = placed ? { ...finding, platform: placed } : finding;
  return (
    release(own, input, dayFindings) ??
    trackingBreak(own, input, dayFindings) ??
    platformOnly(own, input) ??
    // A declared low day that dropped (or high day that rose) is explained by the calendar: drilling into
    // segments would only find who the holiday affects. Only a release or a lone platform overrides it.
    calendar(own, input) ??
    segment(own, input) ??
    behaviour(own, input)
  );
}

/**
 * Tracking breaks: what people cannot do by changing their mind. Parameters
 * changing shape, an event sent more or less often per person, a series or a
 * step going silent. A day's calendar or people's behaviour never explains
 * them.
 */
export function isTrackingBreak(finding: Finding): boolean {
  return (
    finding.check === 'schema' ||
    finding.kind === 'silent' ||
    finding.kind === 'absent_step' ||
    finding.kind === 'absent_event' ||
    finding.metric.includes('per_person')
  );
}

/** What a tracking break is about across platforms: the same check, kind and subject. */
const breakKey = (finding: Finding) => `${finding.check}|${finding.kind}|${finding.subject.name}|${finding.direction}`;

/**
 * A tracking break no version explains, seen on one platform only that day
 * (no finding of the same kind about the same subject on another platform):
 * the platform's tracking, not people, and not the calendar.
 */
function trackingBreak(finding: Finding, input: CheckInput, dayFindings: readonly Finding[]): Attribution | undefined {
  const platform = finding.platform;
  if (platform === null || !isTrackingBreak(finding)) return undefined;
  const key = breakKey(finding);
  const elsewhere = dayFindings.filter((f) => f.platform !== null && f.platform !== platform && isTrackingBreak(f) && breakKey(f) === key);
  if (elsewhere.length > 0) return undefined;
  const others = input.flow.platforms.filter((p) => p !== platform);
  const versions = versionsOn(input, platform, input.day);
  const versionNote = versions.length <= 1 ? `${platform} sends no app versions to tell apart` : 'no single app version explains it';
  return {
    groupKey: `platform|${platform}`,
    cause: {
      label: 'platform',
      confidence: 0.8,
      sentence: `only ${platform} shows it${others.length > 0 ? ` (${others.join(', ')} do not)` : ''}: a tracking change on ${platform}, ${versionNote}`,
      platform,
      version: null,
      evidence: { finding: finding.kind, subject: finding.subject.name, versions: versions.length },
    },
  };
}

/**
 * The platform a finding about every platform comes from: the only one whose
 * measure moved at least `minZ` standard errors while every other moved at
 * most `otherPlatformsShare` as much (relative change). Undefined when the
 * platforms moved alike, or the finding has no measure to compare.
 */
function movedPlatform(finding: Finding, input: CheckInput): string | undefined {
  const found = causeMeasureOf(finding, input.flow);
  if (!found || input.flow.platforms.length < 2) return undefined;
  const measure = acrossSlices(found);
  const days = baselineDays(input);
  const sign = finding.direction === 'up' ? 1 : finding.direction === 'down' ? -1 : 0;
  const changes = input.flow.platforms.map((platform) => ({ platform, change: relativeChange(input, measure, all(platform), days) }));
  const moved = changes.filter((c) => Number.isFinite(c.change) && (sign === 0 || Math.sign(c.change) === sign));
  if (moved.length === 0) return undefined;
  const lead = moved.reduce((a, b) => (Math.abs(b.change) > Math.abs(a.change) ? b : a));
  const rest = changes.filter((c) => c.platform !== lead.platform && Number.isFinite(c.change));
  if (rest.some((c) => Math.abs(c.change) > CAUSE_THRESHOLDS.otherPlatformsShare * Math.abs(lead.change))) return undefined;
  return Math.abs(changeZ(input, measure, all(lead.platform), days)) >= CAUSE_THRESHOLDS.minZ ? lead.platform : undefined;
}

/**
 * The pipeline: a freshness finding, or every watched series moving one way
 * on an undeclared day with a mark of lost data in what came (lost-data.ts).
 * The same move with intact data is people, one incident for the day.
 */
function dataDelay(finding: Finding, input: CheckInput, dayFindings: readonly Finding[]): Attribution | undefined {
  if (finding.check === 'freshness') {
    return {
      // A late collector holds back every platform at once: one incident, whichever platforms it hit.
      groupKey: 'data_delay',
      cause: {
        label: 'data_delay',
        confidence: 0.9,
        sentence: `the data is late or incomplete: ${finding.message}`,
        platform: finding.platform,
        version: null,
        evidence: { check: 'freshness', kind: finding.kind, ...(finding.evidence ?? {}) },
      },
    };
  }
  // Rows loaded twice (freshness's mark, on any platform: a loader runs for every platform at once) raise events per
  // person wherever they cross their own thresholds; those rises are the same load, not a tracking change of one platform.
  const twice = finding.metric.includes('per_person') && finding.direction === 'up' ? dayFindings.find((f) => f.check === 'freshness' && f.kind === 'duplicates') : undefined;
  if (twice) {
    return {
      groupKey: 'data_delay',
      cause: {
        label: 'data_delay',
        confidence: 0.8,
        sentence: `the data is late or incomplete: ${twice.message}`,
        platform: twice.platform,
        version: null,
        evidence: { check: 'freshness', kind: twice.kind, ...(twice.evidence ?? {}) },
      },
    };
  }
  // One event's count per person rising on every platform at once, with the watched events' per-person counts up
  // with it (lost-data.ts), is rows loaded twice: people do not send every event twice, and no one platform or
  // version did it. A per-person rise on some platforms only stays theirs (a tracking change there).
  const rose = finding.metric.includes('per_person') && finding.direction === 'up' && finding.subject.type === 'event' && perPersonRoseEverywhere(input, finding.subject.event ?? finding.subject.name);
  const loadedTwice = rose ? lostData(input, 'up') : undefined;
  if (loadedTwice) {
    return {
      groupKey: 'data_delay',
      cause: {
        label: 'data_delay',
        confidence: 0.7,
        sentence: `${finding.subject.name} events per person rose on every platform on ${input.day}, and ${loadedTwice.sentence}: the pipeline, not the people`,
        platform: null,
        version: null,
        evidence: { lostData: loadedTwice.kind, ...loadedTwice.evidence },
      },
    };
  }
  // Every watched event on every platform moving one way on an undeclared day is the pipeline, not people.
  if (finding.check !== 'volume' || input.calendar.some((entry) => entry.day === input.day)) return undefined;
  const moved = new Set(
    dayFindings
      .filter((f) => f.check === 'volume' && f.subject.type === 'event' && f.direction === finding.direction)
      .map((f) => `${f.subject.event ?? f.subject.name}|${f.platform}`),
  );
  const expected = input.flow.events.length * input.flow.platforms.length;
  if (expected < 2 || moved.size < Math.ceil(CAUSE_THRESHOLDS.movedTogetherShare * expected)) return undefined;
  // A stopped pipeline moves every dimension value alike; one value that moved apart from the rest is a segment.
  if (segment(finding, input)) return undefined;
  const together = `${moved.size} of ${expected} watched event x platform series moved ${finding.direction} together on ${input.day}, a day with nothing declared`;
  // Everything moving together is the pipeline only when the data that came shows it (rows lost, or loaded twice); otherwise it is people.
  const lost = finding.direction === 'down' || finding.direction === 'up' ? lostData(input, finding.direction) : undefined;
  if (!lost) {
    return {
      groupKey: `behaviour|together|${finding.direction}`,
      cause: {
        label: 'behaviour',
        confidence: 0.6,
        sentence: `${together}, with intact data (hours of the day, events per person, steps inside journeys): ${finding.direction === 'down' ? 'fewer' : 'more'} people doing the usual things. If ${input.day} was a holiday or a campaign, declare it in the calendar`,
        platform: null,
        version: null,
        evidence: { movedSeries: moved.size, watchedSeries: expected },
      },
    };
  }
  return {
    groupKey: 'data_delay',
    cause: {
      label: 'data_delay',
      confidence: 0.7,
      sentence: `${together}, and ${lost.sentence}: the pipeline, not the people`,
      platform: null,
      version: null,
      evidence: { movedSeries: moved.size, watchedSeries: expected, lostData: lost.kind, ...lost.evidence },
    },
  };
}

/** Whether an event's count per person rose by at least lost-data's least change on every platform of the flow. */
function perPersonRoseEverywhere(input: CheckInput, event: string): boolean {
  const measure: Measure = { kind: 'events_per_person', event, label: '' };
  const days = baselineDays(input);
  return input.flow.platforms.length > 1 && input.flow.platforms.every((p) => relativeChange(input, measure, all(p), days) >= LOST_DATA_THRESHOLDS.minChange);
}

/**
 * The earlier version a schema break of `version` comes from: the same
 * series (check family, event, key, platform) was judged anomalous for a
 * version first seen before this one, on a day of the history or today. A
 * later release that keeps a renamed key or a new value carries on the
 * release that brought it. Undefined when no earlier version had it.
 */
function broughtBy(finding: Finding, platform: string, version: string, input: CheckInput, dayFindings: readonly Finding[]): string | undefined {
  const prefix = finding.seriesKey.slice(0, finding.seriesKey.lastIndexOf(':') + 1);
  const candidates = new Set<string>();
  for (const [key, days] of Object.entries(input.anomalous)) if (key.startsWith(prefix) && days.length > 0) candidates.add(key.slice(prefix.length));
  for (const f of dayFindings) if (f.check === 'schema' && f.version !== null && f.seriesKey.startsWith(prefix)) candidates.add(f.version);
  candidates.delete(version);
  candidates.delete(ALL_VERSIONS);
  const own = firstSeen(input, platform, version);
  let best: { version: string; seen: Day } | undefined;
  for (const candidate of candidates) {
    const seen = firstSeen(input, platform, candidate);
    if (seen === undefined || own === undefined || seen >= own) continue;
    if (!best || seen < best.seen) best = { version: candidate, seen };
  }
  return best?.version;
}

function release(finding: Finding, input: CheckInput, dayFindings: readonly Finding[]): Attribution | undefined {
  const platform = finding.platform;
  if (platform === null) return undefined;
  if (finding.check === 'schema' && finding.version !== null && finding.version !== ALL_VERSIONS) {
    const earlier = broughtBy(finding, platform, finding.version, input, dayFindings);
    const version = earlier ?? finding.version;
    const seen = firstSeen(input, platform, version);
    const adoption = shareOfPlatform(input, platform, version);
    // The schema message names its version already: say it once.
    const what = withoutPrefix(finding.message, `${platform} ${finding.version} `);
    return {
      groupKey: `release|${platform}|${version}`,
      cause: {
        label: 'release',
        confidence: 0.9,
        sentence: `${platform} ${version} (first seen ${seen ?? 'before the history'}, ${formatPercent(adoption)} of ${platform} people) ${earlier ? `brought a change that ${finding.version} keeps: ${finding.message}` : what}`,
        platform,
        version,
        evidence: { version, firstSeen: seen ?? null, adoption, finding: finding.kind, ...(earlier ? { keptBy: finding.version } : {}) },
      },
    };
  }
  const measure = causeMeasureOf(finding, input.flow);
  if (!measure) return undefined;
  const versions = versionsOn(input, platform, input.day);
  if (versions.length < 2) return undefined;
  const named = versionOf(measure, platform, versions, input);
  if (named || measure.kind !== 'flow_conversion') return named;
  // Over the whole flow, a version's broken step is diluted by every other step's noise on every version: the
  // end-to-end move is tested again where the platform's funnel moved most, as a finding about that step would be.
  const step = localisedStep(input, platform, finding.direction);
  return step === undefined ? undefined : versionOf({ kind: 'step_conversion', step, label: `${input.flow.steps[step - 1]!.name} -> ${input.flow.steps[step]!.name} conversion` }, platform, versions, input);
}

/** The app version of `platform` that explains the day's move of `measure` (the release test), if one does. */
function versionOf(measure: Measure, platform: string, versions: readonly string[], input: CheckInput): Attribution | undefined {
  const byVersion = new Map(versions.map((version) => [version, measureOn(input, measure, input.day, { platform, version, dimension: '', value: '' })]));
  const days = baselineDays(input);
  const baseline = baselineOf(input, measure, all(platform), days);
  const usual = rate(baseline);
  const today = rate(measureOn(input, measure, input.day, all(platform)));
  if (!Number.isFinite(usual) || !Number.isFinite(today) || today === usual) return undefined;
  let best: { version: string; own: Ratio; rest: Ratio; reference: Ratio; pValue: number } | undefined;
  for (const version of versions) {
    const own = byVersion.get(version)!;
    if (own.den < CAUSE_THRESHOLDS.minVersionPeople) continue;
    const rest = versions
      .filter((v) => v !== version)
      .reduce(
        (acc, v) => ({ num: acc.num + byVersion.get(v)!.num, den: acc.den + byVersion.get(v)!.den, spread: (acc.spread ?? 0) + (byVersion.get(v)!.spread ?? 0) }),
        { num: 0, den: 0, spread: 0 } as Ratio,
      );
    // Few people left on the other versions (a release most of the platform has taken): the version is compared
    // with the platform's usual self over the baseline days instead.
    const reference = rest.den >= CAUSE_THRESHOLDS.minVersionPeople ? rest : baseline;
    if (!(reference.den > 0)) continue;
    // The version must sit on the side the platform moved to.
    if (Math.sign(rate(own) - rate(reference)) !== Math.sign(today - usual)) continue;
    const { pValue } = compare(measure, own, reference);
    if (!best || pValue < best.pValue) best = { version, own, rest, reference, pValue };
  }
  if (!best || best.pValue > CAUSE_THRESHOLDS.releasePValue) return undefined;
  // Compared with the platform's usual self (nobody left on other versions), a version cannot be told from what
  // moved every platform: the others must have moved at most `otherPlatformsShare` as much, as for a platform cause.
  if (best.reference === baseline && movedElsewhere(input, measure, platform, days)) return undefined;
  // The other versions must look like the platform's usual self: they carry at most `restShareOfChange` of the
  // platform's change, or they are within `minZ` standard errors of their usual level (a version with a tenth of
  // the platform moves it a tenth as much as it moved, and the others' noise can be as large).
  const restShare = best.rest.den > 0 ? (rate(best.rest) - usual) / (today - usual) : 0;
  const restUsual = best.rest.den === 0 || restShare <= CAUSE_THRESHOLDS.restShareOfChange || Math.abs(compare(measure, best.rest, baseline).z) < CAUSE_THRESHOLDS.minZ;
  if (!restUsual) return undefined;
  const seen = firstSeen(input, platform, best.version);
  const adoption = shareOfPlatform(input, platform, best.version);
  const ownRate = level(measure, best.own);
  const against = best.reference === best.rest ? 'on other versions' : `usually on ${platform}`;
  const what = releaseEffect(input, measure, best.own, best.reference, against);
  return {
    groupKey: `release|${platform}|${best.version}`,
    cause: {
      label: 'release',
      confidence: Math.min(0.99, Math.max(0.5, 1 - Math.max(0, Number.isFinite(restShare) ? restShare : 0))),
      sentence: `${platform} ${best.version} (first seen ${seen ?? 'before the history'}, ${formatPercent(adoption)} of ${platform} people) ${what}`,
      platform,
      version: best.version,
      evidence: {
        version: best.version,
        firstSeen: seen ?? null,
        adoption,
        measure: measure.label,
        versionNum: best.own.num,
        versionDen: best.own.den,
        versionRate: ownRate,
        restRate: level(measure, best.reference),
        restPeople: best.rest.den,
        platformUsual: measure.kind === 'step_seconds' ? Math.exp(usual) : usual,
        pValue: best.pValue,
      },
    },
  };
}

/** Whether another platform moved more than `otherPlatformsShare` of `platform`'s relative change, the same way. */
function movedElsewhere(input: CheckInput, measure: Measure, platform: string, days: readonly Day[]): boolean {
  const own = relativeChange(input, measure, all(platform), days);
  if (!Number.isFinite(own) || own === 0) return false;
  return input.flow.platforms.some((p) => {
    if (p === platform) return false;
    const change = relativeChange(input, measure, all(p), days);
    return Number.isFinite(change) && Math.sign(change) === Math.sign(own) && Math.abs(change) > CAUSE_THRESHOLDS.otherPlatformsShare * Math.abs(own);
  });
}

function withoutPrefix(text: string, prefix: string): string {
  return text.startsWith(prefix) ? text.slice(prefix.length) : text;
}

/** What the version did, in words and numbers, against the other versions of its platform. */
function releaseEffect(input: CheckInput, measure: Measure, own: Ratio, rest: Ratio, against: string): string {
  const stopped = own.num === 0 && rest.num > 0;
  const restRate = formatRatio(measure, rate(rest));
  const steps = input.flow.steps.map((step) => step.name);
  switch (measure.kind) {
    case 'step_conversion': {
      const [from, to] = [steps[measure.step - 1]!, steps[measure.step]!];
      const counts = `${formatCount(own.num)} of ${formatCount(own.den)} people at ${from} reached ${to}`;
      return stopped ? `stopped sending the ${to} step: ${counts}, against ${restRate} ${against}` : `${counts} (${formatRatio(measure, rate(own))}), against ${restRate} ${against}`;
    }
    case 'step_people': {
      const step = steps[measure.step]!;
      const counts = `${formatCount(own.num)} people at ${step} for ${formatCount(own.den)} entering`;
      return stopped ? `stopped sending the ${step} step: ${counts}, against ${restRate} per person entering ${against}` : `${counts}, against ${restRate} per person entering ${against}`;
    }
    case 'step_seconds': {
      const [from, to] = [steps[measure.step - 1]!, steps[measure.step]!];
      return `takes a median ${formatNumber(level(measure, own))} s from ${from} to ${to} (${formatCount(own.den)} people timed), against ${formatNumber(level(measure, rest))} s ${against}`;
    }
    case 'event_people': {
      const counts = `${formatCount(own.num)} people sending ${measure.event} for ${formatCount(own.den)} entering`;
      return stopped ? `stopped sending ${measure.event}: ${counts}, against ${restRate} per person entering ${against}` : `${counts}, against ${restRate} per person entering ${against}`;
    }
    default:
      return `${measure.label} ${formatRatio(measure, rate(own))} (${formatCount(own.num)} over ${formatCount(own.den)}), against ${restRate} ${against}`;
  }
}

function formatRatio(measure: Measure, value: number): string {
  if (!Number.isFinite(value)) return '-';
  return isRateMeasure(measure) ? value.toFixed(2) : formatPercent(value);
}

/** A version's share of its platform's people entering the flow on the judged day. */
function shareOfPlatform(input: CheckInput, platform: string, version: string): number {
  const people = (v: string) =>
    input.steps.filter((r) => r.day === input.day && r.step === 0 && r.platform === platform && r.version === v).reduce((sum, r) => sum + r.people, 0);
  const total = people(ALL_VERSIONS);
  return total > 0 ? people(version) / total : 0;
}

function platformOnly(finding: Finding, input: CheckInput): Attribution | undefined {
  const platform = finding.platform;
  if (platform === null) return undefined;
  const found = causeMeasureOf(finding, input.flow);
  if (!found) return undefined;
  const measure = acrossSlices(found);
  const days = baselineDays(input);
  // The platform must really have moved on this measure, not by noise.
  const z = changeZ(input, measure, all(platform), days);
  if (!(Math.abs(z) >= CAUSE_THRESHOLDS.minZ)) return undefined;
  const own = relativeChange(input, measure, all(platform), days);
  const others = input.flow.platforms.filter((p) => p !== platform).map((p) => ({ platform: p, change: relativeChange(input, measure, all(p), days) }));
  const measured = others.filter((o) => Number.isFinite(o.change));
  if (!Number.isFinite(own) || own === 0 || measured.length === 0) return undefined;
  const largest = Math.max(...measured.map((o) => Math.abs(o.change)));
  if (largest > CAUSE_THRESHOLDS.otherPlatformsShare * Math.abs(own)) return undefined;
  return {
    groupKey: `platform|${platform}`,
    cause: {
      label: 'platform',
      confidence: Math.min(0.95, 1 - largest / Math.abs(own)),
      sentence: `only ${platform} moved: ${measure.label} ${formatSigned(own)} against its usual level while ${measured
        .map((o) => `${o.platform} ${formatSigned(o.change)}`)
        .join(', ')}; no single app version explains it`,
      platform,
      version: null,
      evidence: { measure: measure.label, change: own, z, ...Object.fromEntries(measured.map((o) => [`change_${o.platform}`, o.change])) },
    },
  };
}

function formatSigned(change: number): string {
  return `${change >= 0 ? '+' : ''}${formatPercent(change)}`;
}

function segment(finding: Finding, input: CheckInput): Attribution | undefined {
  const found = causeMeasureOf(finding, input.flow);
  if (!found) return undefined;
  const measure = acrossSlices(found);
  if (measure.kind === 'step_count' || measure.kind === 'step_seconds') return undefined;
  const days = baselineDays(input);
  const candidates: Array<{ dimension: string; values: ValueChange[] }> = [];
  const variances = new Map<string, number>();
  for (const dimension of dimensionsIn(input)) {
    const values: ValueChange[] = [];
    for (const value of dimensionValues(input, measure, dimension, input.day)) {
      const slice: Slice = { platform: finding.platform, version: ALL_VERSIONS, dimension, value };
      // Forecast: a count's level on this weekday, or today's exposure at the value's usual rate; actual: what happened.
      const { value: actual, forecast, variance } = expectation(input, measure, slice, days);
      if (!Number.isFinite(forecast)) continue;
      values.push({ value, forecast, actual });
      variances.set(`${dimension}=${value}`, variance);
    }
    if (values.length >= 2) candidates.push({ dimension, values });
  }
  const explanation = explain(candidates, { minValueEp: 0.1, minTotalEp: CAUSE_THRESHOLDS.segmentMinEp })[0];
  if (!explanation || explanation.values.length > CAUSE_THRESHOLDS.segmentMaxValues) return undefined;
  // A proportional move makes the largest value "explain" its share: require the chosen values to move apart from the rest.
  const chosen = new Set(explanation.values.map((v) => v.value));
  const dimensionValuesScored = candidates.find((c) => c.dimension === explanation.dimension)!.values;
  const totals = (pick: (v: ValueChange) => boolean) =>
    dimensionValuesScored.filter(pick).reduce((acc, v) => ({ forecast: acc.forecast + v.forecast, actual: acc.actual + v.actual }), { forecast: 0, actual: 0 });
  const inside = totals((v) => chosen.has(v.value));
  const outside = totals((v) => !chosen.has(v.value));
  const insideChange = inside.forecast > 0 ? inside.actual / inside.forecast - 1 : 0;
  const outsideChange = outside.forecast > 0 ? outside.actual / outside.forecast - 1 : 0;
  if (insideChange === 0 || Math.abs(outsideChange) > CAUSE_THRESHOLDS.segmentRestShare * Math.abs(insideChange)) return undefined;
  // ... and the move must be larger than the noise of a segment that size (`expectation`: overdispersed, weekday-matched).
  const insideVariance = explanation.values.reduce((sum, v) => sum + variances.get(`${explanation.dimension}=${v.value}`)!, 0);
  const z = (inside.actual - inside.forecast) / Math.sqrt(insideVariance);
  if (!(Math.abs(z) >= CAUSE_THRESHOLDS.minZ)) return undefined;
  const values = explanation.values.map((v) => v.value).join(', ');
  return {
    groupKey: `segment|${explanation.dimension}=${values}`,
    cause: {
      label: 'segment',
      confidence: Math.min(0.95, explanation.ep * (1 - Math.abs(outsideChange / insideChange))),
      sentence: `${explanation.dimension} = ${values} explains ${formatPercent(Math.min(1, explanation.ep), 0)} of the change in ${measure.label}: ${formatCount(
        inside.actual,
      )} against ${formatCount(inside.forecast)} expected (${formatSigned(insideChange)}), the rest ${formatSigned(outsideChange)}`,
      platform: finding.platform,
      version: null,
      segment: { dimension: explanation.dimension, value: values, explanatoryPower: explanation.ep, surprise: explanation.surprise },
      evidence: {
        measure: measure.label,
        dimension: explanation.dimension,
        values,
        explanatoryPower: explanation.ep,
        surprise: explanation.surprise,
        segmentChange: insideChange,
        restChange: outsideChange,
        z,
      },
    },
  };
}

/**
 * The cause of a `segments` finding: its dimension value, its usual share and the loss. When the explanatory
 * power and surprise ranking of the same measure (`segment`, as for a finding about the total) names that value
 * too, the cause takes that explanation's group and values, so a value's drop that also moved the total is one
 * incident.
 */
function namedSegment(finding: Finding, input: CheckInput): Attribution | undefined {
  const evidence = finding.evidence ?? {};
  const dimension = String(evidence.dimension ?? '');
  const value = String(evidence.value ?? '');
  if (dimension === '' || typeof evidence.expected !== 'number' || typeof evidence.rest !== 'number') return undefined;
  const ranked = segment(finding, input);
  const agrees = ranked?.cause.segment?.dimension === dimension && ranked.cause.segment.value.split(', ').includes(value);
  const conversion = finding.metric === 'end_to_end_conversion';
  const entering = Number(evidence.entering ?? 0);
  // Conversion is sized in completions: the value's expected and actual ones beside the rest's.
  const forecast = conversion ? entering * evidence.expected : evidence.expected;
  const actual = conversion ? entering * finding.observed : finding.observed;
  const [scored] = scoreValues([
    { value, forecast: Math.max(0, forecast), actual: Math.max(0, actual) },
    { value: '(rest)', forecast: evidence.rest, actual: evidence.rest },
  ]);
  const usualShare = Number(evidence.usualShare);
  const lost = Number(evidence.lost);
  const lostShare = Number(evidence.lostShare);
  const what = conversion ? 'completions' : 'people';
  return {
    // Where the ranking named this value (perhaps with another), its group: one incident with the total's findings.
    groupKey: agrees ? ranked!.groupKey : `segment|${dimension}=${value}`,
    cause: {
      label: 'segment',
      confidence: Math.min(0.95, Math.max(0.5, 1 - 1 / Math.max(1, Math.abs(finding.score)))),
      sentence: `${dimension} = ${value} (usually ${formatPercent(usualShare, 0)} of the flow's ${conversion ? 'people entering' : 'people'}) lost ${formatCount(Math.max(0, lost))} ${what} on ${input.day}, ${formatPercent(lostShare)} of the flow's: ${
        conversion ? `${formatPercent(finding.observed)} converted against ${formatPercent(evidence.expected)}` : `${formatCount(finding.observed)} against ${formatCount(evidence.expected)}`
      } expected from its usual share of the flow`,
      platform: finding.platform,
      version: null,
      segment: agrees ? ranked!.cause.segment! : { dimension, value, explanatoryPower: scored!.ep, surprise: scored!.surprise },
      evidence: { measure: finding.metric, dimension, values: value, usualShare, lost, lostShare, explanatoryPower: scored!.ep, surprise: scored!.surprise, z: finding.score },
    },
  };
}

/**
 * A declared day explains only what it announces: a move of people or
 * conversion in the announced direction (fewer on a low day, more on a high
 * one). Never a tracking break, and never a move the other way.
 */
function calendar(finding: Finding, input: CheckInput): Attribution | undefined {
  if (isTrackingBreak(finding) || !causeMeasureOf(finding, input.flow)) return undefined;
  const entry = input.calendar.find((c) => c.day === input.day && (c.expect === 'low' ? finding.direction === 'down' : finding.direction === 'up'));
  if (!entry) return undefined;
  return {
    groupKey: `calendar|${entry.note}`,
    cause: {
      label: 'calendar',
      confidence: 0.85,
      sentence: `${input.day} is declared in the calendar: ${entry.note} (expected ${entry.expect})`,
      platform: null,
      version: null,
      evidence: { note: entry.note, expected: entry.expect },
    },
  };
}

function behaviour(finding: Finding, input: CheckInput): Attribution {
  const found = causeMeasureOf(finding, input.flow);
  const measure = found ? acrossSlices(found) : undefined;
  const days = baselineDays(input);
  const changes = measure
    ? input.flow.platforms.map((p) => ({ platform: p, change: relativeChange(input, measure, all(p), days) })).filter((c) => Number.isFinite(c.change))
    : [];
  // Every platform alike: the same way, and each at least `otherPlatformsShare` of the largest move (a sliver the
  // same way beside another platform's large move is that platform's).
  const largest = Math.max(0, ...changes.map((c) => Math.abs(c.change)));
  const together =
    changes.length > 1 &&
    changes.every((c) => Math.sign(c.change) === Math.sign(changes[0]!.change) && Math.abs(c.change) >= CAUSE_THRESHOLDS.otherPlatformsShare * largest);
  return {
    // People doing something else on every platform alike is one change of the day, whichever series crossed a
    // threshold (a holiday's events and steps, a regressed step's conversion and the people after it): one group,
    // the same as "every watched series moved together" (dataDelay). A move on some platforms stays its series'.
    groupKey: together ? `behaviour|together|${finding.direction}` : `behaviour|${finding.subject.name}`,
    cause: {
      label: 'behaviour',
      confidence: together ? 0.6 : 0.3,
      sentence: measure
        ? `no tracking cause found: ${measure.label} moved on ${together ? 'every platform' : 'some platforms'} (${changes.map((c) => `${c.platform} ${formatSigned(c.change)}`).join(', ')}), as a change in what people do would`
        : `no tracking cause found for ${finding.subject.name}`,
      platform: together ? null : finding.platform,
      version: null,
      evidence: { measure: measure?.label ?? null, ...Object.fromEntries(changes.map((c) => [`change_${c.platform}`, c.change])) },
    },
  };
}
