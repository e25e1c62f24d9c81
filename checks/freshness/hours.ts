/**
 * Is a day's data complete? Each platform's events per local hour are compared
 * with the platform's own hourly profile from the four weeks before, so the
 * quiet night hours of a small platform never look like a stop.
 *
 * DST: `DayStatusRow.hourly` counts hours elapsed since local midnight (23, 24
 * or 25 of them). Each entry is aligned to the local clock hour it covers (the
 * hour shown on a wall clock at its middle), so on the 25-hour day both 01:00
 * hours take the profile's 01:00 share (people are awake in both) and on the
 * 23-hour day the skipped 02:00 has no entry and no share. The profile is the
 * median over days of each clock hour's share of the day, renormalised to 1.
 */
import { median } from '../stats/index.js';
import { dayStart } from '../time.js';
import type { CheckInput, DayStatusRow } from '../types.js';

const HOUR_MS = 3_600_000;
/**
 * Days whose hours form the profile: the latest this many days with events
 * before the judged one (four weeks: every weekday four times). Days without
 * events are passed over, so a silence never becomes the usual.
 */
const PROFILE_DAYS = 28;
/** Fewest usable days for a profile (one week, common practice); with fewer, nothing is said about the day. */
const MIN_PROFILE_DAYS = 7;
/**
 * Least share of the day's usual events the hours before a cut must hold to
 * project the rest of the day from them; with less (a stop in the small
 * hours), the rest is projected from the profile days' median day instead.
 */
const MIN_PROJECTING_SHARE = 0.05;
/**
 * Fewest hours the slow-end test looks at. Measured on the demo data (Aug-Nov,
 * three platforms, complete days): the last hour alone held 0.34 to 1.80 times
 * its projection from the earlier hours, the last three 0.65 to 1.41, so
 * shorter tails are too noisy to judge.
 */
const MIN_TAIL_HOURS = 3;

const formats = new Map<string, Intl.DateTimeFormat>();
function format(timezone: string, options: Intl.DateTimeFormatOptions): Intl.DateTimeFormat {
  const key = `${timezone}|${JSON.stringify(options)}`;
  let f = formats.get(key);
  if (!f) formats.set(key, (f = new Intl.DateTimeFormat('en-US', { timeZone: timezone, hourCycle: 'h23', ...options })));
  return f;
}

/** Memo of clockHours (deterministic): every run asks again about the same four weeks, each day costing dozens of time-zone conversions. */
const clockCache = new Map<string, readonly number[]>();

/** Local clock hour (0-23) of each of the `hours` hours of `day`, read at the middle of the hour. */
export function clockHours(day: string, timezone: string, hours: number): readonly number[] {
  const key = `${timezone}|${day}|${hours}`;
  let found = clockCache.get(key);
  if (!found) {
    const start = dayStart(day, timezone).getTime();
    const f = format(timezone, { hour: '2-digit' });
    found = Array.from({ length: hours }, (_, i) => Number(f.format(new Date(start + i * HOUR_MS + HOUR_MS / 2))) % 24);
    clockCache.set(key, found);
  }
  return found;
}

/** `HH:MM` local time of the end of the minute holding an instant: nothing came after it. */
export function localTime(instant: number, timezone: string): string {
  return format(timezone, { hour: '2-digit', minute: '2-digit' }).format(new Date(Math.floor(instant / 60_000) * 60_000 + 60_000));
}

export interface Profile {
  /** Expected share of a day's events in each clock hour 0-23 (sums to 1). */
  shares: Float64Array;
  /** Median events of the profile days. */
  typicalDay: number;
  days: number;
}

/**
 * Hourly profile of `platform` from the latest `PROFILE_DAYS` days with events
 * before the judged day, leaving out `skip` (calendar days and days already
 * found incomplete); undefined with fewer than `MIN_PROFILE_DAYS`.
 */
export function hourlyProfile(input: CheckInput, platform: string, skip: ReadonlySet<string>): Profile | undefined {
  const rows = input.status.filter((row) => row.platform === platform && row.day < input.day && row.events > 0 && !skip.has(row.day)).slice(-PROFILE_DAYS);
  if (rows.length < MIN_PROFILE_DAYS) return undefined;
  const byHour: number[][] = Array.from({ length: 24 }, () => []);
  for (const row of rows) {
    const perHour = new Float64Array(24);
    const present = new Set<number>();
    clockHours(row.day, input.timezone, row.hourly.length).forEach((hour, i) => {
      perHour[hour]! += row.hourly[i]!;
      present.add(hour);
    });
    for (const hour of present) byHour[hour]!.push(perHour[hour]! / row.events);
  }
  const shares = Float64Array.from(byHour, (values) => (values.length > 0 ? median(values) : 0));
  const total = shares.reduce((a, b) => a + b, 0);
  for (let h = 0; h < 24; h++) shares[h] = total > 0 ? shares[h]! / total : 1 / 24;
  return { shares, typicalDay: median(rows.map((row) => row.events)), days: rows.length };
}

export interface Completeness {
  kind: 'no_events' | 'partial_day' | 'slow_day_end';
  platform: string;
  events: number;
  /** The day's events projected to a complete day. */
  expectedDay: number;
  /** Events the missing part should have held. */
  missing: number;
  /** Local `HH:MM` of the newest event (partial_day). */
  stoppedAt: string | null;
  /** Seconds from the newest event to the day's end. */
  lagSeconds: number | null;
  /** Events in the last hours and how many were due there (slow_day_end). */
  tailHours: number;
  tailEvents: number | null;
  tailExpected: number | null;
  profileDays: number;
}

export interface CompletenessOptions {
  maxLagSeconds: number;
  minTailShare: number;
  minMissingEvents: number;
}

/** Sum of the hourly shares over [from, to), in hours since midnight; fractional ends take their part of the hour. */
function shareBetween(shares: readonly number[], from: number, to: number): number {
  let sum = 0;
  for (let i = Math.floor(from); i < Math.min(shares.length, Math.ceil(to)); i++) {
    sum += shares[i]! * (Math.min(i + 1, to) - Math.max(i, from));
  }
  return sum;
}

/**
 * Projects the events after a cut from the events before it: the day so far
 * scaled by the profile's shares, or the typical day when the part before the
 * cut is too small a share of a day to project from.
 */
function project(before: number, shareBefore: number, shareAfter: number, profile: Profile): number {
  return shareBefore >= MIN_PROJECTING_SHARE ? (before * shareAfter) / shareBefore : profile.typicalDay * shareAfter;
}

/**
 * What is missing from `row` (the judged day of one platform, whose first and
 * last instants are `bounds`, in ms), or undefined
 * when the day looks complete or there is no profile to tell. Two tests, the
 * first one that holds wins:
 * - stopped: the newest event is more than `maxLagSeconds` before the day's
 *   end and the profile says at least `minMissingEvents` should have come
 *   after it (a quiet platform's empty night is not a stop);
 * - slow end: the last `maxLagSeconds` (in whole hours, at least three) hold
 *   less than `minTailShare` of the events the earlier hours predict for
 *   them up to the newest event, and that shortfall is at least
 *   `minMissingEvents`: events still come but far fewer than usual.
 */
export function completeness(
  input: CheckInput,
  platform: string,
  row: DayStatusRow | undefined,
  profile: Profile,
  bounds: { start: number; end: number },
  o: CompletenessOptions,
): Completeness | undefined {
  const base = { platform, stoppedAt: null, lagSeconds: null, tailHours: 0, tailEvents: null, tailExpected: null, profileDays: profile.days };
  if (!row || row.events === 0 || row.newestAt === null) {
    return { ...base, kind: 'no_events', events: 0, expectedDay: profile.typicalDay, missing: profile.typicalDay };
  }
  const n = row.hourly.length;
  const shares = clockHours(input.day, input.timezone, n).map((hour) => profile.shares[hour]!);
  const total = shares.reduce((a, b) => a + b, 0);
  const { start, end } = bounds;
  const newest = Date.parse(row.newestAt);

  const elapsed = Math.min(n, Math.max(0, (newest - start) / HOUR_MS));
  const shareBefore = shareBetween(shares, 0, elapsed);
  const after = project(row.events, shareBefore, total - shareBefore, profile);
  const lagSeconds = Math.max(0, (end - newest) / 1000);
  if (lagSeconds > o.maxLagSeconds && after >= o.minMissingEvents) {
    return {
      ...base,
      kind: 'partial_day',
      events: row.events,
      expectedDay: row.events + after,
      missing: after,
      stoppedAt: localTime(newest, input.timezone),
      lagSeconds,
    };
  }

  // Only the part of the tail up to the newest event is due: a stop within max_lag is tolerated, a thin stream is not.
  const tailHours = Math.min(n - 1, Math.max(MIN_TAIL_HOURS, Math.round(o.maxLagSeconds / 3600)));
  const cut = n - tailHours;
  if (elapsed <= cut) return undefined;
  let early = 0;
  let tail = 0;
  row.hourly.forEach((events, i) => {
    if (i < cut) early += events;
    else tail += events;
  });
  const shareEarly = shareBetween(shares, 0, cut);
  const due = project(early, shareEarly, shareBetween(shares, cut, elapsed), profile);
  if (tail < o.minTailShare * due && due - tail >= o.minMissingEvents) {
    return {
      ...base,
      kind: 'slow_day_end',
      events: row.events,
      expectedDay: early + project(early, shareEarly, total - shareEarly, profile),
      missing: due - tail,
      lagSeconds,
      tailHours,
      tailEvents: tail,
      tailExpected: due,
    };
  }
  return undefined;
}
