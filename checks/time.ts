/**
 * Calendar arithmetic for checks, without a clock: business days are ISO dates
 * in the configured IANA timezone, instants are ISO timestamps.
 */
import type { Day } from './types.js';

const MS_PER_DAY = 86_400_000;

export function addDays(day: Day, n: number): Day {
  return new Date(Date.parse(`${day}T00:00:00Z`) + n * MS_PER_DAY).toISOString().slice(0, 10);
}

/** 0 = Sunday ... 6 = Saturday. */
export function weekday(day: Day): number {
  return new Date(`${day}T12:00:00Z`).getUTCDay();
}

const formatters = new Map<string, Intl.DateTimeFormat>();

/** One formatter per timezone: building one costs far more than using it. */
function formatterFor(timezone: string): Intl.DateTimeFormat {
  let formatter = formatters.get(timezone);
  if (!formatter) {
    formatter = new Intl.DateTimeFormat('en-US', {
      timeZone: timezone,
      hourCycle: 'h23',
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      second: '2-digit',
    });
    formatters.set(timezone, formatter);
  }
  return formatter;
}

/** Offset of `timezone` from UTC at `instant`, in milliseconds (positive east of Greenwich). */
function offsetAt(instant: number, timezone: string): number {
  const parts = formatterFor(timezone).formatToParts(new Date(instant));
  const get = (type: string) => Number(parts.find((part) => part.type === type)!.value);
  const asUtc = Date.UTC(get('year'), get('month') - 1, get('day'), get('hour'), get('minute'), get('second'));
  return asUtc - Math.floor(instant / 1000) * 1000;
}

/** The instant local midnight starts `day` in `timezone` (handles DST: days last 23, 24 or 25 hours). */
export function dayStart(day: Day, timezone: string): Date {
  const naive = Date.parse(`${day}T00:00:00Z`);
  // Two passes: the offset at the guess, then at the corrected instant (differs only across a DST change).
  let instant = naive - offsetAt(naive, timezone);
  instant = naive - offsetAt(instant, timezone);
  return new Date(instant);
}

/** The instant `day` ends (local midnight of the next day). */
export function dayEnd(day: Day, timezone: string): Date {
  return dayStart(addDays(day, 1), timezone);
}
