/**
 * The measure behind a finding, recomputed from the rollups at any grain
 * (platform, app version, dimension value) so the cause analysis can ask the
 * same question of every slice: "was it one version? one platform? one
 * country?". Pure: reads only the CheckInput rows.
 */
import { rowsByDay } from '../rows.js';
import { ALL_VERSIONS, type CheckInput, type Day, type Finding, type FlowDefinition } from '../types.js';

/** The measures a finding can be about (see `measureOf`). */
export type FindingMeasure =
  /** People reaching step k among those reaching step k - 1 (ordered funnel). */
  | { kind: 'step_conversion'; step: number; label: string }
  /** People completing the flow among those entering it. */
  | { kind: 'flow_conversion'; label: string }
  /** People sending step k's event (any order), per person entering (step 0 people). */
  | { kind: 'step_people'; step: number; label: string }
  /** People sending an event, per person entering the flow. */
  | { kind: 'event_people'; event: string; label: string }
  /** Events per person of one event. */
  | { kind: 'events_per_person'; event: string; label: string };

export type Measure =
  | FindingMeasure
  /** People sending an event, as a count per day (den 1): compares platforms and segments without version sizes. */
  | { kind: 'event_count'; event: string; label: string }
  /** People sending step k's event (any order), as a count per day. */
  | { kind: 'step_count'; step: number; label: string }
  /**
   * Median time from step k - 1 to step k, on the log scale: num = sum of timed x ln(median) over rows, den = timed
   * people, spread = sum of timed x ln(p90 / median); num / den is the mean log median (a geometric mean of medians).
   */
  | { kind: 'step_seconds'; step: number; label: string };

/**
 * The measure to compare platforms and segments on. A count normalised by
 * the flow's entrants (right for versions, whose sizes differ) hides a move
 * of everyone alike, such as a holiday; across platforms and segments the
 * plain count is the honest one.
 */
export function acrossSlices(measure: Measure): Measure {
  if (measure.kind === 'event_people') return { kind: 'event_count', event: measure.event, label: measure.label };
  if (measure.kind === 'step_people') return { kind: 'step_count', step: measure.step, label: measure.label };
  return measure;
}

/** Measures that are a count per day rather than a ratio of people. */
export function isCount(measure: Measure): boolean {
  return measure.kind === 'event_count' || measure.kind === 'step_count';
}

/** A slice of the data: a platform (or every platform), a version (or all) and a dimension value (or none). */
export interface Slice {
  platform: string | null;
  version: string;
  dimension: string;
  value: string;
}

/** Numerator and denominator of a measure on one day in one slice. */
export interface Ratio {
  num: number;
  den: number;
  /** step_seconds only: sum over rows of timed x ln(p90 / median), the spread of the log times. */
  spread?: number;
}

const ZERO: Ratio = { num: 0, den: 0 };

export function rate(ratio: Ratio): number {
  return ratio.den > 0 ? ratio.num / ratio.den : Number.NaN;
}

/**
 * The measure the cause analysis compares slices on: a finding's own measure
 * (`measureOf`), except that a median step time is compared as a time.
 */
export function causeMeasureOf(finding: Finding, flow: FlowDefinition): Measure | undefined {
  if (finding.metric === 'step_seconds_median' && finding.subject.type === 'step') {
    const step = flow.steps.findIndex((s) => s.name === (finding.subject.step ?? finding.subject.name));
    if (step > 0) return { kind: 'step_seconds', step, label: `${flow.steps[step - 1]!.name} -> ${flow.steps[step]!.name} median time` };
  }
  return measureOf(finding, flow);
}

/** The measure a finding is about, from its subject and metric; undefined when it has none (freshness, schema). */
export function measureOf(finding: Finding, flow: FlowDefinition): FindingMeasure | undefined {
  const stepIndex = (name: string | undefined) => flow.steps.findIndex((step) => step.name === name);
  const { subject, metric } = finding;
  const isConversion = metric.includes('conversion') || metric.includes('ratio') || metric.includes('share');
  if (subject.type === 'flow') return { kind: 'flow_conversion', label: 'flow completion' };
  if (subject.type === 'step') {
    const step = stepIndex(subject.step ?? subject.name);
    if (step < 0) return undefined;
    const name = flow.steps[step]!.name;
    if (isConversion && step > 0) return { kind: 'step_conversion', step, label: `${flow.steps[step - 1]!.name} -> ${name} conversion` };
    return step > 0 ? { kind: 'step_people', step, label: `people at the ${name} step` } : { kind: 'flow_conversion', label: 'flow completion' };
  }
  if (subject.type === 'event') {
    const event = subject.event ?? subject.name;
    if (metric.includes('per_person')) return { kind: 'events_per_person', event, label: `${event} events per person` };
    return { kind: 'event_people', event, label: `people sending ${event}` };
  }
  return undefined;
}

function matches(row: { platform: string; version: string; dimension: string; value: string }, slice: Slice): boolean {
  return (
    (slice.platform === null || row.platform === slice.platform) &&
    row.version === slice.version &&
    row.dimension === slice.dimension &&
    row.value === slice.value
  );
}

/** People entering the flow in a slice on a day: the denominator that sizes a version or a segment. */
function entrants(input: CheckInput, day: Day, slice: Slice): number {
  if (slice.dimension !== '') {
    return sum(funnelOn(input, day).filter((r) => r.step === 0 && matches(r, slice)), (r) => r.reached);
  }
  return sum(
    stepsOn(input, day).filter((r) => r.step === 0 && (slice.platform === null || r.platform === slice.platform) && r.version === slice.version),
    (r) => r.people,
  );
}

const NONE: never[] = [];
const funnelOn = (input: CheckInput, day: Day) => rowsByDay(input).funnel.get(day) ?? NONE;
const stepsOn = (input: CheckInput, day: Day) => rowsByDay(input).steps.get(day) ?? NONE;
const eventsOn = (input: CheckInput, day: Day) => rowsByDay(input).events.get(day) ?? NONE;

function sum<T>(rows: readonly T[], value: (row: T) => number): number {
  let total = 0;
  for (const row of rows) total += value(row);
  return total;
}

/** The measure's numerator and denominator on `day` in `slice`. */
export function measureOn(input: CheckInput, measure: Measure, day: Day, slice: Slice): Ratio {
  switch (measure.kind) {
    case 'step_conversion': {
      const rows = funnelOn(input, day).filter((r) => matches(r, slice));
      const reached = sum(rows.filter((r) => r.step === measure.step), (r) => r.reached - (input.flow.entry === 'any_step' ? r.entered : 0));
      return { num: reached, den: sum(rows.filter((r) => r.step === measure.step - 1), (r) => r.reached) };
    }
    case 'flow_conversion': {
      const last = input.flow.steps.length - 1;
      const rows = funnelOn(input, day).filter((r) => matches(r, slice));
      return { num: sum(rows.filter((r) => r.step === last), (r) => r.reached), den: sum(rows.filter((r) => r.step === 0), (r) => r.reached) };
    }
    case 'step_people': {
      if (slice.dimension !== '') return ZERO;
      const rows = stepsOn(input, day).filter((r) => (slice.platform === null || r.platform === slice.platform) && r.version === slice.version);
      return { num: sum(rows.filter((r) => r.step === measure.step), (r) => r.people), den: sum(rows.filter((r) => r.step === 0), (r) => r.people) };
    }
    case 'event_people': {
      const rows = eventsOn(input, day).filter((r) => r.event === measure.event && matches(r, slice));
      return { num: sum(rows, (r) => r.people), den: entrants(input, day, slice) };
    }
    case 'events_per_person': {
      const rows = eventsOn(input, day).filter((r) => r.event === measure.event && matches(r, slice));
      return { num: sum(rows, (r) => r.events), den: sum(rows, (r) => r.people) };
    }
    // A day without rows is a day nobody sent it: a count of 0 (a platform sending nothing at all is freshness's to report).
    case 'event_count': {
      const rows = eventsOn(input, day).filter((r) => r.event === measure.event && matches(r, slice));
      return { num: sum(rows, (r) => r.people), den: 1 };
    }
    case 'step_seconds': {
      const rows = funnelOn(input, day).filter((r) => r.step === measure.step && matches(r, slice) && r.secondsMedian !== null && r.secondsMedian > 0 && r.timed > 0);
      return {
        num: sum(rows, (r) => r.timed * Math.log(r.secondsMedian!)),
        den: sum(rows, (r) => r.timed),
        spread: sum(rows, (r) => (r.secondsP90 !== null && r.secondsP90 > r.secondsMedian! ? r.timed * Math.log(r.secondsP90 / r.secondsMedian!) : 0)),
      };
    }
    case 'step_count': {
      if (slice.dimension !== '') return ZERO;
      const rows = stepsOn(input, day).filter(
        (r) => r.step === measure.step && (slice.platform === null || r.platform === slice.platform) && r.version === slice.version,
      );
      return { num: sum(rows, (r) => r.people), den: 1 };
    }
  }
}

/** App versions seen on a platform on a day (not the all-versions total). */
export function versionsOn(input: CheckInput, platform: string, day: Day): string[] {
  const versions = new Set<string>();
  for (const row of stepsOn(input, day)) if (row.platform === platform && row.version !== ALL_VERSIONS) versions.add(row.version);
  for (const row of eventsOn(input, day)) if (row.platform === platform && row.version !== ALL_VERSIONS) versions.add(row.version);
  return [...versions].sort();
}

/** Values of a dimension seen on a day (in the funnel for flow measures, in event counts otherwise). */
export function dimensionValues(input: CheckInput, measure: Measure, dimension: string, day: Day): string[] {
  const rows: ReadonlyArray<{ dimension: string; value: string }> =
    measure.kind === 'event_people' || measure.kind === 'events_per_person' || measure.kind === 'event_count' ? eventsOn(input, day) : funnelOn(input, day);
  return [...new Set(rows.filter((r) => r.dimension === dimension).map((r) => r.value))].sort();
}

export function dimensionsIn(input: CheckInput): string[] {
  return [...new Set([...input.funnel, ...input.events].map((r) => r.dimension).filter((d) => d !== ''))].sort();
}

/**
 * Days the baseline of a measure may use: the last `days` days before the
 * judged day that are neither calendar days nor days the flow already had
 * findings on, so an incident's own days do not define "normal".
 */
export function baselineDays(input: CheckInput, days = 28): Day[] {
  const skip = new Set<Day>(input.calendar.map((entry) => entry.day));
  for (const list of Object.values(input.anomalous)) for (const day of list) skip.add(day);
  const before = input.days.slice(0, -1).reverse();
  const clean = before.filter((day) => !skip.has(day)).slice(0, days);
  // A flow with findings nearly every day still needs a reference: fall back to the plain recent past.
  return clean.length >= 7 ? clean : before.slice(0, days);
}

/** The measure pooled over the baseline days in a slice. */
export function baselineOf(input: CheckInput, measure: Measure, slice: Slice, days: readonly Day[]): Ratio {
  let num = 0;
  let den = 0;
  let spread = 0;
  for (const day of days) {
    const ratio = measureOn(input, measure, day, slice);
    num += ratio.num;
    den += ratio.den;
    spread += ratio.spread ?? 0;
  }
  return measure.kind === 'step_seconds' ? { num, den, spread } : { num, den };
}

/** First day a version has rows on a platform within the input's history. */
export function firstSeen(input: CheckInput, platform: string, version: string): Day | undefined {
  let first: Day | undefined;
  for (const row of input.events) {
    if (row.platform === platform && row.version === version && (first === undefined || row.day < first)) first = row.day;
  }
  return first;
}

/**
 * The step (its index) whose conversion fell (or rose) the most against its
 * usual level on the judged day, on a platform or every platform: where an
 * end-to-end move happened. Undefined when no step moved that way.
 */
export function localisedStep(input: CheckInput, platform: string | null, direction: Finding['direction']): number | undefined {
  const days = baselineDays(input);
  const slice = { platform, version: ALL_VERSIONS, dimension: '', value: '' };
  let best: { step: number; change: number } | undefined;
  for (let step = 1; step < input.flow.steps.length; step++) {
    const measure = { kind: 'step_conversion' as const, step, label: '' };
    const today = rate(measureOn(input, measure, input.day, slice));
    const usual = rate(baselineOf(input, measure, slice, days));
    if (!(usual > 0) || !Number.isFinite(today)) continue;
    const change = (today / usual - 1) * (direction === 'up' ? -1 : 1);
    if (!best || change < best.change) best = { step, change };
  }
  return best && best.change < 0 ? best.step : undefined;
}
