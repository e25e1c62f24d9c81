import { validate as validateCron } from 'node-cron';
import { z } from 'zod';

const DURATION = /^(\d+(?:\.\d+)?)(s|m|h|d)$/;
const SECONDS: Record<string, number> = { s: 1, m: 60, h: 3600, d: 86400 };

/** Parses `90s`, `30m`, `3h`, `2d` into seconds; undefined when malformed. */
export function parseDuration(text: string): number | undefined {
  const match = DURATION.exec(text.trim());
  if (!match) return undefined;
  return Number(match[1]) * SECONDS[match[2]!]!;
}

/** A duration written like `30m`, `3h` or `2d`, as seconds. */
export const duration = () =>
  z
    .string({ error: 'expected a duration such as 30m, 3h or 2d' })
    .refine((text) => parseDuration(text) !== undefined, { message: 'expected a duration such as 30m, 3h or 2d' })
    .transform((text) => parseDuration(text)!);

/** A share written `30%` (or a fraction between 0 and 1), as a fraction. */
export const percent = () =>
  z.union(
    [
      z
        .string()
        .regex(/^\d+(\.\d+)?%$/, { message: 'expected a percentage such as 30%' })
        .transform((text) => Number(text.slice(0, -1)) / 100),
      z.number().min(0).max(1),
    ],
    { error: 'expected a percentage such as 30% (or a fraction from 0 to 1)' },
  );

/** An ISO calendar date `YYYY-MM-DD` that exists. */
export const isoDate = () =>
  z.string({ error: 'expected a date written YYYY-MM-DD' }).refine(
    (text) => {
      if (!/^\d{4}-\d{2}-\d{2}$/.test(text)) return false;
      const date = new Date(`${text}T00:00:00Z`);
      return !Number.isNaN(date.getTime()) && date.toISOString().startsWith(text);
    },
    { message: 'expected a date written YYYY-MM-DD' },
  );

/** An IANA time zone name known to this Node.js runtime. */
export const timeZone = () =>
  z.string().refine(
    (name) => {
      try {
        new Intl.DateTimeFormat('en-US', { timeZone: name });
        return name.includes('/') || name === 'UTC';
      } catch {
        return false;
      }
    },
    { message: 'expected an IANA time zone such as America/New_York' },
  );

/** A five-field cron expression (minute hour day-of-month month day-of-week), read in the business timezone. */
export const cron = () =>
  z.string().refine((text) => text.trim().split(/\s+/).length === 5 && validateCron(text), {
    message: 'expected a five-field cron expression such as "30 6 * * *"',
  });
