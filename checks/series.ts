/**
 * Turning rollup rows into daily series. A missing day (no row) is NaN, which
 * the statistics treat as unknown; a day with a row of 0 is a real zero.
 */
import { platformTotals } from './rows.js';
import type { CalendarDay, CheckInput, Day, ExcerptPoint } from './types.js';

/** Values of `rows` laid on `days` (NaN where no row matched); rows of one day are summed. */
export function dailySeries<R extends { day: Day }>(days: readonly Day[], rows: readonly R[], value: (row: R) => number): Float64Array {
  const index = new Map(days.map((day, i) => [day, i]));
  const series = new Float64Array(days.length).fill(Number.NaN);
  for (const row of rows) {
    const i = index.get(row.day);
    if (i === undefined) continue;
    series[i] = (Number.isNaN(series[i]!) ? 0 : series[i]!) + value(row);
  }
  return series;
}

/**
 * A copy of `series` with the given days set to NaN, so a baseline neither
 * learns from past incidents nor from declared holidays and campaigns. The
 * judged day itself (the last) is kept.
 */
export function withoutDays(series: Float64Array, days: readonly Day[], leaveOut: Iterable<Day>): Float64Array {
  const out = Float64Array.from(series);
  const skip = new Set(leaveOut);
  for (let i = 0; i < days.length - 1; i++) if (skip.has(days[i]!)) out[i] = Number.NaN;
  return out;
}

/** Days to leave out of the baseline of one series: its anomalous days plus every calendar day. */
export function baselineExclusions(seriesKey: string, anomalous: Record<string, Day[]>, calendar: readonly CalendarDay[]): Set<Day> {
  return new Set([...(anomalous[seriesKey] ?? []), ...calendar.map((entry) => entry.day)]);
}

/** The last `length` points of a series for a finding's evidence. */
export function excerpt(
  days: readonly Day[],
  values: Float64Array | readonly number[],
  length: number,
  band?: { low: ArrayLike<number>; high: ArrayLike<number> },
  flagged: ReadonlySet<Day> = new Set(),
): ExcerptPoint[] {
  const start = Math.max(0, days.length - length);
  const points: ExcerptPoint[] = [];
  for (let i = start; i < days.length; i++) {
    const value = values[i]!;
    const point: ExcerptPoint = { day: days[i]!, value: Number.isNaN(value) ? null : value };
    if (band && Number.isFinite(band.low[i]!) && Number.isFinite(band.high[i]!)) {
      point.expectedLow = band.low[i]!;
      point.expectedHigh = band.high[i]!;
    }
    if (flagged.has(days[i]!)) point.flagged = true;
    points.push(point);
  }
  return points;
}

/** First day of the run of consecutive flagged days that ends at the last day. */
export function runStart(days: readonly Day[], flagged: ReadonlySet<Day>): Day | undefined {
  let i = days.length - 1;
  if (!flagged.has(days[i]!)) return undefined;
  while (i > 0 && flagged.has(days[i - 1]!)) i--;
  return days[i];
}

export interface Counts {
  events: Float64Array;
  people: Float64Array;
}

/** Days on which `platform` sent anything at all: a day-status row with events, or any event row. */
export function platformDays(input: CheckInput, platform: string): Set<Day> {
  const days = new Set<Day>();
  for (const row of input.status) if (row.platform === platform && row.events > 0) days.add(row.day);
  for (const row of platformTotals(input).events) if (row.platform === platform) days.add(row.day);
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
  return platformTotals(input).events.filter((row) => row.event === event && row.platform === platform);
}

/** The platform-total rows (all versions) of one step on one platform. */
export function stepRows(input: CheckInput, step: number, platform: string) {
  return platformTotals(input).steps.filter((row) => row.step === step && row.platform === platform);
}
