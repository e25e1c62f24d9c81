import { createTask, parse } from 'node-cron';
import { addDays } from '../config/definitions.js';
import { localDay } from './plan.js';

/** Minutes east of UTC of `timezone` at `instant`. */
function offsetMinutes(instant: Date, timezone: string): number {
  const parts = new Intl.DateTimeFormat('en-US', {
    timeZone: timezone,
    hourCycle: 'h23',
    year: 'numeric',
    month: 'numeric',
    day: 'numeric',
    hour: 'numeric',
    minute: 'numeric',
  }).formatToParts(instant);
  const part = (type: Intl.DateTimeFormatPartTypes) => Number(parts.find((p) => p.type === type)!.value);
  const local = Date.UTC(part('year'), part('month') - 1, part('day'), part('hour'), part('minute'));
  return Math.round((local - Math.floor(instant.getTime() / 60_000) * 60_000) / 60_000);
}

/** The instant of local `hour:minute` on `day` in `timezone` (a time skipped by a DST jump comes out an hour off, and fails the cron match). */
function zonedInstant(day: string, hour: number, minute: number, timezone: string): Date {
  const [year, month, date] = day.split('-').map(Number) as [number, number, number];
  const wall = Date.UTC(year, month - 1, date, hour, minute);
  let guess = wall;
  for (let i = 0; i < 2; i++) guess = wall - offsetMinutes(new Date(guess), timezone) * 60_000;
  return new Date(guess);
}

/**
 * The latest instant at or before `now`, within `lookbackDays` local days,
 * that matches a five-field cron expression in `timezone`, by node-cron's own
 * matching; undefined when there is none. Tries each local day's listed
 * hours and minutes, newest first, instead of every minute of the week.
 */
export function latestOccurrence(cron: string, timezone: string, now: Date, lookbackDays = 8): Date | undefined {
  const task = createTask(cron, () => undefined, { timezone });
  try {
    const { hour: hours, minute: minutes } = parse(cron);
    const today = localDay(now, timezone);
    for (let back = 0; back <= lookbackDays; back++) {
      const day = addDays(today, -back);
      for (const hour of [...hours].sort((a, b) => b - a)) {
        for (const minute of [...minutes].sort((a, b) => b - a)) {
          const at = zonedInstant(day, hour, minute, timezone);
          if (at.getTime() <= now.getTime() && localDay(at, timezone) === day && task.match(at)) return at;
        }
      }
    }
    return undefined;
  } finally {
    void task.destroy();
  }
}
