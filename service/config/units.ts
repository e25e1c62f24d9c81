import { validate as validateCron } from 'node-cron';
import { z } from 'zod';
import { closest } from './problems.js';

export { duration, parseDuration, percent } from '../../checks/options.js';

const DATE_MESSAGE = 'expected a date written YYYY-MM-DD';

/**
 * An ISO calendar date `YYYY-MM-DD` that exists. The pattern is a regex (not
 * only a refinement) so it reaches the JSON Schema and editors check it too.
 */
export const isoDate = (whenMissing = DATE_MESSAGE) =>
  z
    .string({ error: (issue) => (issue.input === undefined ? whenMissing : DATE_MESSAGE) })
    .regex(/^\d{4}-\d{2}-\d{2}$/, { message: DATE_MESSAGE, abort: true })
    .refine(
      (text) => {
        const date = new Date(`${text}T00:00:00Z`);
        return !Number.isNaN(date.getTime()) && date.toISOString().startsWith(text);
      },
      { message: 'expected a date that exists on the calendar' },
    );

const ZONE_MESSAGE = 'expected an IANA time zone such as America/New_York';
/** Every IANA zone name this runtime knows, for "did you mean" (loaded on first use). */
let zoneNames: string[] | undefined;

/** An IANA time zone name known to this Node.js runtime. */
export const timeZone = () =>
  z
    .string({ error: ZONE_MESSAGE })
    .superRefine((name, ctx) => {
      if (isTimeZone(name)) return;
      zoneNames ??= Intl.supportedValuesOf('timeZone');
      const suggestion = closest(name, zoneNames);
      ctx.addIssue({
        code: 'custom',
        message: ZONE_MESSAGE,
        ...(suggestion ? { params: { hint: `did you mean ${suggestion}?` } } : {}),
      });
    })
    .meta({ examples: ['America/New_York', 'Europe/Berlin', 'UTC'] });

function isTimeZone(name: string): boolean {
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: name });
    // Abbreviations such as EST are accepted by Intl but are fixed offsets, not business timezones.
    return name.includes('/') || name === 'UTC';
  } catch {
    return false;
  }
}

/** A five-field cron expression (minute hour day-of-month month day-of-week), read in the business timezone. */
const CRON_MESSAGE = 'expected a five-field cron expression such as "30 6 * * *"';
export const cron = () =>
  z
    .string({ error: CRON_MESSAGE })
    .refine((text) => text.trim().split(/\s+/).length === 5 && validateCron(text), { message: CRON_MESSAGE })
    .meta({ examples: ['30 6 * * *', '0 8 * * 1'] });
