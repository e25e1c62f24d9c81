import { z } from 'zod';
import type { CheckModule } from '../../checks/types.js';
import { cron, duration, isoDate, timeZone } from './units.js';

/** Lower-case words joined by `_` or `-`: ids that end up in URLs, metrics and messages. */
const slug = () =>
  z.string().regex(/^[a-z][a-z0-9_-]*$/, { message: 'expected lower-case letters, digits, _ or - (starting with a letter)' });
const identifier = () => z.string().min(1).max(63);
/** A value that must come from the environment: `${NAME}` or `${NAME:-fallback}`. */
export const SECRET_REFERENCE = /^\$\{[A-Z_][A-Z0-9_]*(:-[^}]*)?\}$/;

const columns = z.strictObject({
  time: identifier().default('occurred_at'),
  name: identifier().default('event_name'),
  user: identifier().default('user_id'),
  device: identifier().default('device_id'),
  platform: identifier().default('platform'),
  version: identifier().default('app_version'),
  params: identifier().default('props'),
});

const calendarEntry = z
  .strictObject({
    date: isoDate().optional(),
    from: isoDate().optional(),
    to: isoDate().optional(),
    /** Days of every month (1-31), for recurring highs such as pass renewals at month start. */
    monthly: z.array(z.number().int().min(1).max(31)).min(1).optional(),
    note: z.string().min(1),
    expect: z.enum(['low', 'high']),
  })
  .refine((entry) => [entry.date, entry.from ?? entry.to, entry.monthly].filter((v) => v !== undefined).length === 1, {
    message: 'expected exactly one of date, from/to or monthly',
  })
  .refine((entry) => (entry.from === undefined) === (entry.to === undefined), { message: 'expected both from and to' })
  .refine((entry) => entry.from === undefined || entry.to === undefined || entry.from <= entry.to, {
    message: 'expected from on or before to',
  });
export type CalendarEntry = z.output<typeof calendarEntry>;

const owner = z.strictObject({
  /** Chat mention text for this owner, e.g. a user group id. */
  chat_mention: z.string().optional(),
  email: z.array(z.email()).default([]),
});

export const mainSchema = z.strictObject({
  timezone: timeZone(),
  warehouse: z.strictObject({
    /** Connection string, as an environment reference; absent means the embedded demo database. */
    url: z.string().regex(SECRET_REFERENCE, { message: 'expected an ${ENV_VAR} reference (connection strings carry secrets)' }).optional(),
    events_table: z.string().regex(/^[^.]+(\.[^.]+)?$/, { message: 'expected table or schema.table' }),
    columns: columns.default(columns.parse({})),
    /** Extra columns to break counts down by, for drill-down (e.g. country, channel). */
    dimensions: z.array(identifier()).max(8).default([]),
    /** Our platform names mapped to the raw values found in the platform column. */
    platforms: z.record(slug(), z.array(z.string()).min(1)),
    /** Memory for the rollup's grouping, per statement (PostgreSQL `work_mem` syntax). */
    work_mem: z.string().regex(/^\d+(kB|MB|GB)$/, { message: 'expected a size such as 256MB' }).default('256MB'),
  }),
  state: z
    .strictObject({
      url: z.string().regex(SECRET_REFERENCE, { message: 'expected an ${ENV_VAR} reference (connection strings carry secrets)' }).optional(),
      schema: identifier().default('plumbline'),
    })
    .default({ schema: 'plumbline' }),
  judging: z
    .strictObject({
      /** Wait this long after local midnight before judging the day that just ended. */
      settle_time: duration().default(7200),
      /** Days of rollup history handed to the checks. */
      history_days: z.number().int().min(14).max(730).default(120),
      /** Past days whose event counts are re-probed for late rows at every run. */
      restatement_days: z.number().int().min(0).max(60).default(7),
    })
    .default({ settle_time: 7200, history_days: 120, restatement_days: 7 }),
  calendar: z.array(calendarEntry).default([]),
  owners: z.record(slug(), owner).default({}),
  incidents: z
    .strictObject({
      /** An incident resolves after this many judged days without its symptoms. */
      resolve_after_days: z.number().int().min(1).max(30).default(2),
      /** At most one repeat notification per incident within this time (a severity rise). */
      renotify_cooldown: duration().default(86400),
    })
    .default({ resolve_after_days: 2, renotify_cooldown: 86400 }),
  delivery: z
    .strictObject({
      chat: z
        .strictObject({
          webhook_url: z.string().regex(SECRET_REFERENCE, { message: 'expected an ${ENV_VAR} reference (webhook URLs are secrets)' }).optional(),
        })
        .default({}),
      email: z
        .strictObject({
          smtp_url: z.string().regex(SECRET_REFERENCE, { message: 'expected an ${ENV_VAR} reference (SMTP URLs carry credentials)' }).optional(),
          from: z.string().default('plumbline <plumbline@localhost>'),
        })
        .default({ from: 'plumbline <plumbline@localhost>' }),
      /** Where payloads go when no webhook or SMTP server is configured (the demo). */
      outbox_dir: z.string().default('.plumbline/outbox'),
      /** Failed sends before a message is parked for a person to look at. */
      max_attempts: z.number().int().min(1).max(50).default(8),
      /** Never show parameter values in messages, pages or digests. */
      hide_values: z.boolean().default(false),
    })
    .default({ chat: {}, email: { from: 'plumbline <plumbline@localhost>' }, outbox_dir: '.plumbline/outbox', max_attempts: 8, hide_values: false }),
  schedule: z
    .strictObject({
      daily_run: cron().default('30 6 * * *'),
      weekly_digest: cron().default('0 8 * * 1'),
      /** Missed days judged at start-up, at most. */
      catch_up_days: z.number().int().min(0).max(90).default(7),
    })
    .default({ daily_run: '30 6 * * *', weekly_digest: '0 8 * * 1', catch_up_days: 7 }),
  http: z
    .strictObject({
      port: z.number().int().min(1).max(65535).default(8080),
      /** Base URL of the pages, used in chat links and the digest. */
      public_url: z.url().default('http://localhost:8080'),
    })
    .default({ port: 8080, public_url: 'http://localhost:8080' }),
});
export type MainConfigInput = z.input<typeof mainSchema>;
export type MainConfig = z.output<typeof mainSchema>;

const scalar = z.union([z.string(), z.number(), z.boolean()]);

const paramContract = z.strictObject({
  type: z.enum(['string', 'integer', 'number', 'boolean', 'object', 'array']),
  enum: z.array(scalar).min(1).optional(),
  min: z.number().optional(),
  max: z.number().optional(),
  required: z.boolean().default(false),
  nullable: z.boolean().default(false),
});

const step = z.strictObject({
  name: slug(),
  event: z.string().min(1),
  where: z.record(z.string().min(1), z.union([scalar, z.array(scalar).min(1)])).default({}),
});

const mute = z.strictObject({
  check: slug(),
  platform: slug().optional(),
  /** Event, step or `event.param` the mute applies to; all subjects when absent. */
  subject: z.string().optional(),
  until: isoDate(),
  reason: z.string().min(3),
});

/** Options of one check with per-platform overrides, merged and defaulted. */
function checkOptions(module: CheckModule) {
  const base = module.options as z.ZodObject;
  const partial = base.partial();
  return base
    .extend({
      /** Every registered check runs on every flow unless turned off here. */
      enabled: z.boolean().default(true),
      per_platform: z.record(slug(), partial).default({}),
    })
    .transform((value) => {
      const { per_platform: overrides, ...flowLevel } = value as Record<string, unknown> & { per_platform: Record<string, object> };
      const per_platform: Record<string, unknown> = {};
      for (const [platform, override] of Object.entries(overrides)) {
        per_platform[platform] = { ...flowLevel, ...stripUndefined(override) };
      }
      return { ...flowLevel, per_platform };
    });
}

function stripUndefined(value: object): object {
  return Object.fromEntries(Object.entries(value).filter(([, v]) => v !== undefined));
}

export function flowSchema(checks: readonly CheckModule[]) {
  const checkShape: Record<string, z.ZodType> = {};
  const defaults: Record<string, unknown> = {};
  for (const module of checks) {
    checkShape[module.id] = checkOptions(module).optional();
    defaults[module.id] = {};
  }
  return z.strictObject({
    flow: slug(),
    title: z.string().optional(),
    owner: slug(),
    steps: z.array(step).min(2, { message: 'a flow needs at least two steps' }),
    conversion_window: duration(),
    step_time_cap: duration(),
    entry: z.enum(['first_step_only', 'any_step']).default('first_step_only'),
    platforms: z.array(slug()).min(1),
    /** Declared parameter contract per event. */
    events: z.record(z.string().min(1), z.strictObject({ params: z.record(z.string().min(1), paramContract).default({}) })).default({}),
    /** Extra events to watch besides the step events. */
    watch: z.array(z.string().min(1)).default([]),
    checks: z
      .strictObject(checkShape)
      .default({})
      .transform((given: Record<string, unknown>) => {
        const resolved: Record<string, unknown> = {};
        for (const module of checks) resolved[module.id] = given[module.id] ?? checkOptions(module).parse({});
        return resolved;
      }),
    calendar: z.array(calendarEntry).default([]),
    mutes: z.array(mute).default([]),
  });
}
export type FlowConfig = z.output<ReturnType<typeof flowSchema>>;
