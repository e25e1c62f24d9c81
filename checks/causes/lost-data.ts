/**
 * Evidence that a day lost data, as opposed to fewer people doing the usual
 * things. A pipeline that drops rows leaves marks inside the data that stays:
 * - hours missing from the day's hourly profile (an hour far below its usual
 *   share of the day);
 * - fewer events per person (people keep some of their events and lose others);
 * - steps missing inside journeys (people reach a later step without the
 *   earlier one's row, so the end-to-end completion falls).
 * A holiday or a quiet day has none of these: fewer people, each behaving as
 * usual. On a rise, the pipeline's mark is the opposite one: rows loaded twice
 * raise events per person (the same people, each event counted again), where a
 * campaign brings more people doing the usual things. Pure: reads only the
 * CheckInput rows.
 */
import { formatPercent } from '../messages.js';
import { rateComparison } from '../stats/rate-comparison.js';
import { twoProportionZ } from '../stats/two-proportion-z.js';
import { ALL_VERSIONS, type CheckInput, type Day } from '../types.js';
import { baselineDays, baselineOf, measureOn, rate } from './measures.js';

/** Common practice, our choices: a mark must be both practically large and far beyond chance. */
export const LOST_DATA_THRESHOLDS = {
  /** An hour holding less than this share of the events its usual share of the day predicts is missing. */
  hourShare: 0.25,
  /** ... when at least this many events were due in it (quiet night hours are noise). */
  minHourEvents: 20,
  /** Events per person or end-to-end completion must move by at least this share of their usual level ... */
  minChange: 0.1,
  /** ... with a p-value below this (two-proportion test or rate comparison). */
  pValue: 1e-6,
};

export interface LostData {
  /** Which mark was found. */
  kind: 'hours' | 'events_per_person' | 'journeys' | 'rows_twice';
  /** Plain-text account with its numbers. */
  sentence: string;
  evidence: Record<string, number | string>;
}

/**
 * The first mark of the pipeline on the judged day, for a move of everything in
 * `direction`: lost data on a drop, rows loaded twice on a rise; undefined when
 * the data that came looks intact.
 */
export function lostData(input: CheckInput, direction: 'down' | 'up'): LostData | undefined {
  const days = baselineDays(input);
  if (direction === 'up') return eventsPerPerson(input, days, 'up');
  return missingHours(input, days) ?? eventsPerPerson(input, days, 'down') ?? brokenJourneys(input, days);
}

function missingHours(input: CheckInput, days: readonly Day[]): LostData | undefined {
  for (const platform of input.flow.platforms) {
    const today = input.status.find((row) => row.day === input.day && row.platform === platform);
    if (!today || today.events <= 0) continue;
    // The usual share of each hour, from baseline days with the same number of hours (DST days have 23 or 25).
    const usual = new Array<number>(today.hourly.length).fill(0);
    let total = 0;
    for (const row of input.status) {
      if (row.platform !== platform || row.hourly.length !== today.hourly.length || !days.includes(row.day)) continue;
      row.hourly.forEach((events, hour) => (usual[hour]! += events));
      total += row.events;
    }
    if (total <= 0) continue;
    const missing = today.hourly.flatMap((events, hour) => {
      const due = (today.events * usual[hour]!) / total;
      return due >= LOST_DATA_THRESHOLDS.minHourEvents && events < LOST_DATA_THRESHOLDS.hourShare * due ? [hour] : [];
    });
    if (missing.length === 0) continue;
    return {
      kind: 'hours',
      sentence: `${platform} is missing ${missing.length} hour${missing.length === 1 ? '' : 's'} of the day (local hour ${missing.join(', ')}) against its usual hourly profile`,
      evidence: { platform, missingHours: missing.join(',') },
    };
  }
  return undefined;
}

/** Events per person of the watched events, all platforms: fewer when rows were lost, more when rows were loaded twice. */
function eventsPerPerson(input: CheckInput, days: readonly Day[], direction: 'down' | 'up'): LostData | undefined {
  const sum = (day: Day) => {
    let events = 0;
    let people = 0;
    for (const event of input.flow.events) {
      const ratio = measureOn(input, { kind: 'events_per_person', event, label: '' }, day, { platform: null, version: ALL_VERSIONS, dimension: '', value: '' });
      events += ratio.num;
      people += ratio.den;
    }
    return { events, people };
  };
  const today = sum(input.day);
  const usual = days.map(sum).reduce((a, b) => ({ events: a.events + b.events, people: a.people + b.people }), { events: 0, people: 0 });
  if (!(today.people > 0 && usual.people > 0 && usual.events > 0)) return undefined;
  const change = today.events / today.people / (usual.events / usual.people) - 1;
  const sign = direction === 'down' ? -1 : 1;
  if (!(sign * change >= LOST_DATA_THRESHOLDS.minChange)) return undefined;
  const { pValue } = rateComparison(today.events, today.people, usual.events, usual.people);
  if (!(pValue < LOST_DATA_THRESHOLDS.pValue)) return undefined;
  if (direction === 'up') {
    return {
      kind: 'rows_twice',
      sentence: `events per person of the watched events rose ${formatPercent(change)} above their usual level, as when rows are loaded twice`,
      evidence: { eventsPerPersonChange: change, pValue },
    };
  }
  return {
    kind: 'events_per_person',
    sentence: `events per person of the watched events fell ${formatPercent(-change)} below their usual level`,
    evidence: { eventsPerPersonChange: change, pValue },
  };
}

function brokenJourneys(input: CheckInput, days: readonly Day[]): LostData | undefined {
  const measure = { kind: 'flow_conversion' as const, label: 'flow completion' };
  const slice = { platform: null, version: ALL_VERSIONS, dimension: '', value: '' };
  const today = measureOn(input, measure, input.day, slice);
  const usual = baselineOf(input, measure, slice, days);
  const change = rate(today) / rate(usual) - 1;
  if (!(change <= -LOST_DATA_THRESHOLDS.minChange)) return undefined;
  const { pValue } = twoProportionZ(Math.round(today.num), Math.round(today.den), Math.round(usual.num), Math.round(usual.den));
  if (!(pValue < LOST_DATA_THRESHOLDS.pValue)) return undefined;
  return {
    kind: 'journeys',
    sentence: `steps are missing inside journeys: flow completion ${formatPercent(rate(today))} against ${formatPercent(rate(usual))} usually`,
    evidence: { completion: rate(today), usualCompletion: rate(usual), pValue },
  };
}
