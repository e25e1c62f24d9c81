/**
 * `volume`: daily distinct people per watched event and per step on each
 * platform (all versions) against a day-of-week expectation; an event or step
 * going silent; and events per person jumping or sinking (an event sent twice,
 * or once instead of every time).
 *
 * Events are judged as people x events per person: a change in people is a
 * `drop`, `rise` or `silent` finding, a change in how many events each person
 * sends is an `events_per_person` finding, so one cause is never reported
 * twice through the raw event count as well.
 *
 * Steps (StepDayRow) are judged when they narrow their event with `where`:
 * a step that is its whole event would repeat the event's findings. A step's
 * events-per-person finding is left out when its event already has one on the
 * same platform that day (the event explains it).
 *
 * Missing days: see counts.ts (0 once the series has existed and the platform
 * sent anything that day, unknown otherwise). The expectation: baseline.ts.
 *
 * Severity: a silent series `silent_severity` (page), a drop larger than
 * `page_drop` page, other drops, rises and events-per-person changes
 * `severity` (warn). On a declared low (high) calendar day a drop (rise) is
 * still reported, as a `note` with the calendar note; a silence or an
 * events-per-person change keeps its severity (a holiday explains fewer
 * people, not none, nor each person sending a different number of events).
 * Calendar days and days already flagged for a series never enter its baseline.
 *
 * Scores: `drop`, `rise`, `silent` and `events_per_person` carry the robust z
 * of the log ratio observed / expected, log((x + 1) / (e + 1)) for people and
 * log(x / e) for events per person, in units of the series' own spread of that
 * log ratio over the last eight weeks (1.4826 MAD), floored at the Poisson
 * noise of a count of that size, 1 / sqrt(e + 1) (1 / sqrt(people) for events
 * per person). Negative below expectation.
 */
import { z } from 'zod';
import { formatNumber, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent, severity } from '../options.js';
import { HOLD_SHARE, anomalousSince, exceedanceOf } from '../findings.js';
import { baselineExclusions, countSeries, eventRows, excerpt, platformDays, stepRows, withoutDays, type Counts } from '../series.js';
import { weekday } from '../time.js';
import type { BandExceedance, CheckInput, CheckModule, Finding, FlowStep, Severity, WithPlatforms } from '../types.js';
import { expectation, logRatio } from './baseline.js';
import { eventsPerPerson } from './counts.js';

export const options = z.strictObject({
  max_drop: percent().default(0.3).describe('A day with more than this share fewer people than expected is a drop (30%: below 0.7 times the usual).'),
  page_drop: percent().default(0.5).describe('Drops larger than this are delivered as page; smaller ones at `severity`.'),
  max_rise: percent()
    .default(1.5)
    .describe('A day with more than this share more people than expected is a rise (150%: above 2.5 times the usual; write 150%, not 1.5).'),
  max_events_per_person_change: percent()
    .default(0.5)
    .describe('Events per person more than this share above their usual value, or below it by the same factor, are reported.'),
  min_people: z.number().int().min(1).default(50).describe('Series expected to have fewer people than this on the day are not judged.'),
  min_score: z
    .number()
    .min(0)
    .default(4)
    .describe("Least robust z of the log ratio observed / expected: a change must also stand out from the series' own day-to-day noise."),
  severity: severity('warn').describe('Severity of drops up to `page_drop`, rises and events-per-person changes.'),
  silent_severity: severity('page').describe('Severity of a series going silent.'),
});
type Options = z.output<typeof options>;

const messages = {
  silent: '{platform} {subject}: nothing on {day}, where a {weekday} usually has {expected} people (silent since {since}){calendar}',
  drop: '{platform} {subject}: {observed} people on {day}, {change} below the usual {expected} for a {weekday} (since {since}){calendar}',
  rise: '{platform} {subject}: {observed} people on {day}, {change} above the usual {expected} for a {weekday} (since {since}){calendar}',
  events_per_person:
    '{platform} {subject}: {observed} events per person on {day} against a usual {expected} ({change}; since {since}): sent twice, or no longer every time?{calendar}',
};

const WEEKDAYS = ['Sunday', 'Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday'];
/** Days of the series shown with a finding. */
const EXCERPT_DAYS = 28;

interface Series {
  subject: Finding['subject'];
  /** How messages name it, e.g. `screen_shown` or `step rider (screen_shown view=rider_details)`. */
  label: string;
  /** Key part shared by its series keys: the event, or `step:<name>`. */
  key: string;
  platform: string;
  counts: Counts;
}

/** Everything a finding of one series on the judged day needs besides its kind. */
interface Judged {
  series: Series;
  seriesKey: string;
  metric: 'people' | 'events_per_person';
  values: Float64Array;
  low: Float64Array;
  high: Float64Array;
  observed: number;
  center: number;
  score: number;
  spread: number;
  used: number;
  spreadDays: number;
}

function stepLabel(step: FlowStep): string {
  const where = Object.entries(step.where)
    .map(([key, value]) => `${key}=${Array.isArray(value) ? value.join('|') : String(value)}`)
    .join(' ');
  return `step ${step.name} (${step.event}${where ? ` ${where}` : ''})`;
}

function allSeries(input: CheckInput): Series[] {
  const series: Series[] = [];
  for (const platform of input.flow.platforms) {
    const sending = platformDays(input, platform);
    for (const event of input.flow.events) {
      series.push({
        subject: { type: 'event', name: event, event },
        label: event,
        key: event,
        platform,
        counts: countSeries(input, eventRows(input, event, platform), sending),
      });
    }
    input.flow.steps.forEach((step, index) => {
      if (Object.keys(step.where).length === 0) return;
      series.push({
        subject: { type: 'step', name: step.name, event: step.event, step: step.name },
        label: stepLabel(step),
        key: `step:${step.name}`,
        platform,
        counts: countSeries(input, stepRows(input, index, platform), sending),
      });
    });
  }
  return series;
}

/**
 * Expectation, spread and thresholds of one measure of a series on the judged
 * day; undefined when the day is unknown or the history too short to judge.
 * `offset` is the log ratio's (1 for counts, 0 for rates), `noiseFloor` the
 * least spread a measure of that size can have, `lowFactor` / `highFactor`
 * the practical thresholds as factors of the expectation.
 */
function judge(
  input: CheckInput,
  series: Series,
  metric: Judged['metric'],
  values: Float64Array,
  offset: number,
  noiseFloor: (center: number) => number,
  o: Options,
  lowFactor: number,
  highFactor: number,
): Judged | undefined {
  const last = values.length - 1;
  const observed = values[last]!;
  if (Number.isNaN(observed)) return undefined;
  const seriesKey = `volume:${metric}:${series.key}:${series.platform}:*`;
  const base = withoutDays(values, input.days, baselineExclusions(seriesKey, input.anomalous, input.calendar));
  const fit = expectation(base, offset);
  const center = fit.expected[last]!;
  if (!Number.isFinite(center) || Number.isNaN(fit.spread)) return undefined;
  const spread = Math.max(fit.spread, noiseFloor(center));
  const low = new Float64Array(values.length);
  const high = new Float64Array(values.length);
  for (let i = 0; i <= last; i++) {
    const e = fit.expected[i]!;
    // A finding needs both the practical change and the z: the band edge is the farther of the two.
    low[i] = Math.min(e * lowFactor, (e + offset) * Math.exp(-o.min_score * spread) - offset);
    high[i] = Math.max(e * highFactor, (e + offset) * Math.exp(o.min_score * spread) - offset);
  }
  return {
    series,
    seriesKey,
    metric,
    values,
    low,
    high,
    observed,
    center,
    score: logRatio(observed, center, offset) / spread,
    spread,
    used: fit.used,
    spreadDays: fit.spreadDays,
  };
}

function finding(input: CheckInput, judged: Judged, kind: keyof typeof messages, direction: 'up' | 'down', level: Severity): Finding {
  const { series, observed, center } = judged;
  const last = input.days.length - 1;
  const flaggedDays = new Set([...(input.anomalous[judged.seriesKey] ?? []), input.day]);
  const since = anomalousSince(input, judged.seriesKey) ?? input.day;
  const entry = input.calendar.find((day) => day.day === input.day);
  // A declared low (high) day explains fewer (more) people, not a silence nor a change in events per person.
  const explained = entry !== undefined && (kind === 'drop' || kind === 'rise') && (entry.expect === 'low') === (direction === 'down');
  const change = observed / center - 1;
  const counts = series.counts;
  const message = renderMessage(messages[kind], {
    platform: series.platform,
    subject: series.label,
    day: input.day,
    weekday: WEEKDAYS[weekday(input.day)],
    observed: formatNumber(observed),
    expected: formatNumber(center),
    change: kind === 'events_per_person' ? `${change >= 0 ? '+' : ''}${formatPercent(change, 0)}` : formatPercent(Math.abs(change), 0),
    since,
    calendar: entry ? `; ${input.day} is declared in the calendar: ${entry.note} (${entry.expect})` : '',
  });
  return {
    check: 'volume',
    kind,
    flow: input.flow.id,
    subject: series.subject,
    metric: judged.metric,
    platform: series.platform,
    version: null,
    day: input.day,
    since,
    observed,
    expected: { low: judged.low[last]!, high: judged.high[last]!, center },
    score: judged.score,
    direction,
    severity: explained ? 'note' : level,
    message,
    seriesKey: judged.seriesKey,
    excerpt: excerpt(input.days, judged.values, EXCERPT_DAYS, { low: judged.low, high: judged.high }, flaggedDays),
    ...(entry ? { calendar: entry.note } : {}),
    evidence: {
      people: counts.people[last]!,
      events: counts.events[last]!,
      expected: center,
      change,
      spread: judged.spread,
      spreadDays: judged.spreadDays,
      sameWeekdays: judged.used,
      baseline: 'median of the same weekday over the last four usable weeks',
    },
  };
}

/** People findings of one series: silent, drop or rise. */
function judgePeople(input: CheckInput, series: Series, o: Options): Finding[] {
  // Poisson floor: a count of about e people cannot be steadier than sqrt(e), i.e. 1 / sqrt(e) on the log scale.
  const judged = judge(input, series, 'people', series.counts.people, 1, (e) => 1 / Math.sqrt(e + 1), o, 1 - o.max_drop, 1 + o.max_rise);
  if (!judged || judged.center < o.min_people) return [];
  const { observed, center, score } = judged;
  if (observed === 0) return [finding(input, judged, 'silent', 'down', o.silent_severity)];
  if (observed < center * (1 - o.max_drop) && score < -o.min_score) {
    return [finding(input, judged, 'drop', 'down', 1 - observed / center > o.page_drop ? 'page' : o.severity)];
  }
  if (observed > center * (1 + o.max_rise) && score > o.min_score) return [finding(input, judged, 'rise', 'up', o.severity)];
  return [];
}

/** Events-per-person finding of one series, when its people clear the floor. */
function judgeRate(input: CheckInput, series: Series, o: Options): Finding | undefined {
  const last = input.days.length - 1;
  const people = series.counts.people[last]!;
  if (!(people >= o.min_people)) return undefined;
  const factor = 1 + o.max_events_per_person_change;
  // The same floor for a rate averaged over `people` persons (common practice: a coefficient of variation of 1 per person).
  const judged = judge(input, series, 'events_per_person', eventsPerPerson(series.counts), 0, () => 1 / Math.sqrt(people), o, 1 / factor, factor);
  if (!judged) return undefined;
  const { observed, center, score } = judged;
  if (observed > center * factor && score > o.min_score) return finding(input, judged, 'events_per_person', 'up', o.severity);
  if (observed < center / factor && score < -o.min_score) return finding(input, judged, 'events_per_person', 'down', o.severity);
  return undefined;
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const findings: Finding[] = [];
  const rateFindings = new Set<string>();
  for (const series of allSeries(input)) {
    const o = optionsFor(all, series.platform);
    const people = judgePeople(input, series, o);
    findings.push(...people);
    // A silent series has no events per person to speak of.
    if (people.some((f) => f.kind === 'silent')) continue;
    const event = series.subject.event!;
    if (series.subject.type === 'step' && rateFindings.has(`${event}|${series.platform}`)) continue;
    const rate = judgeRate(input, series, o);
    if (!rate) continue;
    findings.push(rate);
    if (series.subject.type === 'event') rateFindings.add(`${event}|${series.platform}`);
  }
  return findings;
}

/**
 * Hysteresis: the open series (`input.open`) still beyond half of every
 * threshold (practical change and score), in either direction; the pipeline
 * keeps the ones `run` did not report.
 */
function outside(input: CheckInput, all: WithPlatforms<Options>): BandExceedance[] {
  const open = new Set(input.open ?? []);
  if (open.size === 0) return [];
  const exceedances: BandExceedance[] = [];
  for (const series of allSeries(input)) {
    const o = optionsFor(all, series.platform);
    const held: Options = {
      ...o,
      max_drop: o.max_drop * HOLD_SHARE,
      max_rise: o.max_rise * HOLD_SHARE,
      max_events_per_person_change: o.max_events_per_person_change * HOLD_SHARE,
      min_score: o.min_score * HOLD_SHARE,
    };
    const key = (metric: Judged['metric']) => `volume:${metric}:${series.key}:${series.platform}:*`;
    const found = [...(open.has(key('people')) ? judgePeople(input, series, held) : []), ...(open.has(key('events_per_person')) ? [judgeRate(input, series, held)] : [])];
    for (const f of found) {
      const exceedance = f && exceedanceOf(f);
      if (exceedance) exceedances.push(exceedance);
    }
  }
  return exceedances;
}

export const volumeCheck: CheckModule<typeof options> = {
  id: 'volume',
  description: 'Daily people per watched event and step on each platform against a day-of-week expectation, silent series, and jumps in events per person.',
  options,
  messages,
  run,
  outside,
  needsHistory: true,
};
