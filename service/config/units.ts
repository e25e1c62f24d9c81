import { validate as validateCron } from 'node-cron';
import { z } from 'zod';

export { duration, parseDuration, percent } from '../../checks/options.js';

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
