/**
 * Daily events and people of one watched series (an event or a step on one
 * platform, all versions), with an explicit rule for days without a row.
 */
import { dailySeries } from '../series.js';
import type { CheckInput, Day } from '../types.js';
import { ALL_VERSIONS } from '../types.js';

export interface Counts {
  events: Float64Array;
  people: Float64Array;
}

/** Days on which `platform` sent anything at all: a day-status row with events, or any event row. */
export function platformDays(input: CheckInput, platform: string): Set<Day> {
  const days = new Set<Day>();
  for (const row of input.status) if (row.platform === platform && row.events > 0) days.add(row.day);
  for (const row of input.events) if (row.platform === platform) days.add(row.day);
  return days;
}

/**
 * Events and people of `rows` (one series, one row a day at most) on
 * `input.days`. A day without a row counts as 0 once the series has had a row
 * earlier in the history and the platform sent other data that day: the
 * platform used to send it and stopped. It stays unknown (NaN) before the
 * series first appears (it did not exist yet) and on days the platform sent
 * nothing at all (a delay or an outage of the whole platform, which is the
 * freshness check's to report).
 */
export function countSeries(input: CheckInput, rows: ReadonlyArray<{ day: Day; events: number; people: number }>, sending: ReadonlySet<Day>): Counts {
  const events = dailySeries(input.days, rows, (row) => row.events);
  const people = dailySeries(input.days, rows, (row) => row.people);
  let seen = false;
  for (let i = 0; i < input.days.length; i++) {
    if (!Number.isNaN(people[i]!)) seen = true;
    else if (seen && sending.has(input.days[i]!)) {
      events[i] = 0;
      people[i] = 0;
    }
  }
  return { events, people };
}

/** The platform-total rows (all versions, no dimension) of one event on one platform. */
export function eventRows(input: CheckInput, event: string, platform: string) {
  return input.events.filter((row) => row.event === event && row.platform === platform && row.version === ALL_VERSIONS && row.dimension === '');
}

/** The platform-total rows (all versions) of one step on one platform. */
export function stepRows(input: CheckInput, step: number, platform: string) {
  return input.steps.filter((row) => row.step === step && row.platform === platform && row.version === ALL_VERSIONS);
}

/** Events per person on each day with people; NaN where nobody sent the series (no rate to speak of). */
export function eventsPerPerson(counts: Counts): Float64Array {
  return counts.people.map((people, i) => (people > 0 ? counts.events[i]! / people : Number.NaN));
}
