/**
 * The zod schemas of `plumbline.yaml` and the flow files. They are the single
 * source of truth: the loader validates with them, and `plumbline schema`
 * turns them into the JSON Schemas editors use, so every `.describe()` here is
 * what a config author sees on hover.
 */
import { z } from 'zod';
import type { CheckModule } from '../../checks/types.js';
import { WAREHOUSE_ENGINES } from '../warehouse/engine.js';
import { DEFAULT_ROW_LIMITS } from '../warehouse/mapping.js';
import { cron, duration, isoDate, timeZone } from './units.js';

/** Lower-case words joined by `_` or `-`: ids that end up in URLs, metrics and messages. */
const slug = () =>
  z.string().regex(/^[a-z][a-z0-9_-]*$/, { message: 'expected lower-case letters, digits, _ or - (starting with a letter)' });
const identifier = () => z.string().min(1).max(63);
/** A value that must come from the environment: `${NAME}` or `${NAME:-fallback}`. */
export const SECRET_REFERENCE = /^\$\{[A-Z_][A-Z0-9_]*(:-[^}]*)?\}$/;
/** The keys read through `resolveReference`: the only places an `${ENV}` reference means anything. */
export const REFERENCE_KEYS = [
  'warehouse.url',
  'state.url',
  'delivery.chat.webhook_url',
  'delivery.email.smtp_url',
  'http.auth.token',
  'http.auth.password',
] as const;

/** The chat payload formats plumbline can post (`service/delivery/chat.ts` renders each); the first is the default. */
export const CHAT_FORMAT_IDS = ['slack'] as const;
export type ChatFormatId = (typeof CHAT_FORMAT_IDS)[number];

/** Keys renamed since they were first published, by full key: `validate` points from the old name to the new one. */
export const RENAMED_KEYS: Readonly<Record<string, string>> = { 'incidents.renotify_cooldown': 'repeat_after' };

const secretReference = (why: string) =>
  z.string().regex(SECRET_REFERENCE, { message: `expected an \${ENV_VAR} reference (${why})` });

const columns = z.strictObject({
  time: identifier().default('occurred_at').describe('When the event happened (timestamp with time zone).'),
  name: identifier().default('event_name').describe('Event name.'),
  user: identifier().default('user_id').describe('Signed-in user id; may be null.'),
  device: identifier().default('device_id').describe('Device or browser id, counted when the user id is null.'),
  platform: identifier().default('platform').describe('Raw platform value, mapped by warehouse.platforms.'),
  version: identifier().default('app_version').describe('App version; null on web is fine.'),
  params: identifier()
    .default('props')
    .describe('Event parameters as a JSON object column (PostgreSQL json or jsonb; ClickHouse String holding JSON, or the JSON type).'),
});

const calendarEntry = z
  .strictObject({
    date: isoDate().optional().describe('A single day, YYYY-MM-DD.'),
    from: isoDate().optional().describe('First day of a range (with to).'),
    to: isoDate().optional().describe('Last day of a range (with from).'),
    monthly: z
      .array(z.number().int().min(1).max(31))
      .min(1)
      .optional()
      .describe('Days of every month (1-31), for recurring highs such as pass renewals at month start.'),
    note: z.string().min(1).describe('Shown beside findings on these days.'),
    expect: z.enum(['low', 'high']).describe('Whether the days are expected to be low or high.'),
  })
  .superRefine((entry, ctx) => {
    const kinds = { date: entry.date, 'from/to': entry.from ?? entry.to, monthly: entry.monthly };
    const given = Object.entries(kinds)
      .filter(([, value]) => value !== undefined)
      .map(([kind]) => kind);
    if (given.length !== 1) {
      ctx.addIssue({
        code: 'custom',
        message: 'expected exactly one of date, from/to or monthly',
        params: { found: given.length === 0 ? 'none of them' : given.join(' and ') },
      });
    }
    if ((entry.from === undefined) !== (entry.to === undefined)) {
      const missing = entry.from === undefined ? 'from' : 'to';
      ctx.addIssue({ code: 'custom', path: [missing], message: 'expected both from and to', params: { found: `no ${missing}` } });
    }
    if (entry.from !== undefined && entry.to !== undefined && entry.from > entry.to) {
      ctx.addIssue({ code: 'custom', path: ['to'], message: 'expected a day on or after from', params: { found: `${entry.to}, before ${entry.from}` } });
    }
  })
  .describe('An expected high or low: one of date, from/to or monthly, with a note.');
export type CalendarEntry = z.output<typeof calendarEntry>;

const owner = z
  .strictObject({
    chat_mention: z.string().optional().describe('Chat mention text for this owner, e.g. a user group id.'),
    email: z.array(z.email()).default([]).describe('Recipients of the weekly digest.'),
  })
  .describe('A team that owns flows: how to reach it.');

export const mainSchema = z
  .strictObject({
    timezone: timeZone().describe('IANA name of the business timezone; days run from local midnight to local midnight.'),
    warehouse: z
      .strictObject({
        engine: z
          .enum(WAREHOUSE_ENGINES)
          .default('postgres')
          .describe('The engine holding the events table: postgres, or clickhouse (a server or cluster, or chdb in-process).'),
        url: secretReference('connection strings carry secrets')
          .optional()
          .describe(
            '${ENV} reference to the warehouse: a PostgreSQL connection string, or a ClickHouse http(s) URL with user, password and database; absent means the embedded engine.',
          ),
        events_table: z
          .string({ error: 'expected the events table, as table or schema.table' })
          .regex(/^[^.]+(\.[^.]+)?$/, { message: 'expected the events table, as table or schema.table' })
          .describe('The events table, as table or schema.table.'),
        columns: columns.default(columns.parse({})).describe('The column playing each role.'),
        dimensions: z
          .array(identifier())
          .max(8)
          .default([])
          .describe('Extra columns to break counts down by, for drill-down (e.g. country, channel).'),
        platforms: z
          .record(slug(), z.array(z.string()).min(1))
          .describe('Our platform names mapped to the raw values found in the platform column.'),
        work_mem: z
          .string()
          .regex(/^\d+(kB|MB|GB)$/, { message: 'expected a size such as 256MB' })
          .default('256MB')
          .describe('Memory for the rollup grouping, per statement (PostgreSQL work_mem syntax).'),
        statement_timeout: duration().default(1800).describe('Longest one warehouse statement may run before the engine stops it.'),
        limits: z
          .strictObject({
            event_names: z.number().int().min(1).default(DEFAULT_ROW_LIMITS.event_names).describe('Distinct event names kept per platform and day (watched events always).'),
            versions: z.number().int().min(1).default(DEFAULT_ROW_LIMITS.versions).describe('Distinct app versions kept per platform and day.'),
            dimension_values: z.number().int().min(1).default(DEFAULT_ROW_LIMITS.dimension_values).describe('Distinct values of each dimension kept per platform and day.'),
            param_keys: z.number().int().min(1).default(DEFAULT_ROW_LIMITS.param_keys).describe('Distinct parameter keys kept per watched event, platform and day.'),
          })
          .default(DEFAULT_ROW_LIMITS)
          .describe('Most distinct values a day keeps, those with the most events; the rest are counted in the day status and left out of the rollup.'),
        tls_ca_file: z
          .string()
          .min(1)
          .optional()
          .describe('ClickHouse over https: PEM file of the certificate authority that signed the server certificate, when it is not a public one.'),
        embedded_dir: z
          .string()
          .min(1)
          .default('.plumbline/clickhouse')
          .describe('ClickHouse without url: the data directory of the in-process engine (chdb) holding the events table.'),
      })
      .describe('Where the events are and how their columns map to plumbline roles.'),
    state: z
      .strictObject({
        url: secretReference('connection strings carry secrets')
          .optional()
          .describe("${ENV} reference to the database holding plumbline's own schema; the warehouse when absent."),
        schema: identifier().default('plumbline').describe("plumbline's own schema, created and migrated automatically."),
      })
      .default({ schema: 'plumbline' })
      .describe("plumbline's own tables: rollups, runs, findings, incidents, outbox."),
    judging: z
      .strictObject({
        settle_time: duration().default(7200).describe('Wait this long after local midnight before judging the day that just ended.'),
        history_days: z.number().int().min(14).max(730).default(120).describe('Days of rollup history handed to the checks.'),
        restatement_days: z
          .number()
          .int()
          .min(0)
          .max(60)
          .default(7)
          .describe('Past days whose event counts are re-probed for late rows at every run.'),
        learning_days: z
          .number()
          .int()
          .min(0)
          .max(365)
          .default(28)
          .describe(
            'Days with data a flow needs before the checks that compare with history judge it (at most history_days - 1); until then only freshness and declared contracts speak, and the first sight of a key or value is its baseline.',
          ),
      })
      .default({ settle_time: 7200, history_days: 120, restatement_days: 7, learning_days: 28 })
      .describe('When a day is judged and how much history the checks see.'),
    calendar: z.array(calendarEntry).default([]).describe('Expected highs and lows for every flow.'),
    owners: z.record(slug(), owner).default({}).describe('Owners named by the flow files.'),
    incidents: z
      .strictObject({
        resolve_after_days: z.number().int().min(1).max(30).default(2).describe('An incident resolves after this many judged days without its symptoms.'),
        repeat_after: duration()
          .default(86400)
          .describe('Least time between two messages about one incident: a severity rise sooner than this after the last message waits.'),
      })
      .default({ resolve_after_days: 2, repeat_after: 86400 })
      .describe('When incidents resolve and how often they notify again.'),
    delivery: z
      .strictObject({
        chat: z
          .strictObject({
            format: z
              .enum(CHAT_FORMAT_IDS)
              .default(CHAT_FORMAT_IDS[0])
              .describe('Payload format of the chat webhook: slack (a Slack incoming webhook, Block Kit sections), the only one so far.'),
            webhook_url: secretReference('webhook URLs are secrets')
              .optional()
              .describe('${ENV} reference to the chat webhook; without it payloads are written to outbox_dir.'),
            honours_idempotency_key: z
              .boolean()
              .default(false)
              .describe(
                'The webhook shows a message once per Idempotency-Key header: a message whose sender stopped between post and acknowledgement is posted again. False (Slack incoming webhooks promise no such thing): it is marked unconfirmed instead, never posted twice.',
              ),
          })
          .default({ format: CHAT_FORMAT_IDS[0], honours_idempotency_key: false }),
        email: z
          .strictObject({
            smtp_url: secretReference('SMTP URLs carry credentials')
              .optional()
              .describe('${ENV} reference to the SMTP server for the weekly digest; without it the digest is written to outbox_dir.'),
            from: z.string().default('plumbline <plumbline@localhost>').describe('Sender of the digest.'),
          })
          .default({ from: 'plumbline <plumbline@localhost>' }),
        outbox_dir: z.string().default('.plumbline/outbox').describe('Where payloads go when no webhook or SMTP server is configured (the demo).'),
        max_attempts: z.number().int().min(1).max(50).default(8).describe('Failed sends before a message is parked for a person to look at.'),
        hide_values: z.boolean().default(false).describe('Never show parameter values in messages, pages or digests.'),
        hide_keys: z
          .array(z.string().min(1))
          .default([])
          .describe('Parameter keys whose values are never kept, so never shown: `key` (on any event) or `event.key`. Their counts and types are still checked.'),
      })
      .default({ chat: { format: CHAT_FORMAT_IDS[0], honours_idempotency_key: false }, email: { from: 'plumbline <plumbline@localhost>' }, outbox_dir: '.plumbline/outbox', max_attempts: 8, hide_values: false, hide_keys: [] })
      .describe('Chat messages per incident and the weekly e-mail digest.'),
    schedule: z
      .strictObject({
        daily_run: cron().default('30 6 * * *').describe('When the daily run starts (cron, business timezone).'),
        weekly_digest: cron().default('0 8 * * 1').describe('When the weekly digest is sent (cron, business timezone).'),
        catch_up_days: z.number().int().min(0).max(90).default(7).describe('Missed days judged at start-up, at most.'),
      })
      .default({ daily_run: '30 6 * * *', weekly_digest: '0 8 * * 1', catch_up_days: 7 })
      .describe('When the daily run and the weekly digest happen, in the business timezone.'),
    http: z
      .strictObject({
        port: z.number().int().min(1).max(65535).default(8080).describe('Port of the pages and the health endpoints.'),
        host: z
          .string()
          .min(1)
          .default('127.0.0.1')
          .describe('Interface `plumbline serve` listens on: this machine only by default; the container image passes --host 0.0.0.0.'),
        probe_port: z
          .number()
          .int()
          .min(1)
          .max(65535)
          .optional()
          .describe('Serve /healthz, /readyz and /metrics on this port (never behind auth) and only the pages on `port`.'),
        auth: z
          .strictObject({
            token: secretReference('tokens are secrets').optional().describe('${ENV} reference to a bearer token the pages accept (Authorization: Bearer ...).'),
            user: z.string().min(1).regex(/^[^:]+$/, { message: 'expected a user name without ":"' }).optional().describe('User name for HTTP basic auth (with password).'),
            password: secretReference('passwords are secrets').optional().describe('${ENV} reference to the basic auth password (with user).'),
          })
          .refine((auth) => (auth.user === undefined) === (auth.password === undefined), { message: 'user and password go together' })
          .refine((auth) => auth.token !== undefined || auth.user !== undefined, { message: 'expected token, or user and password' })
          .optional()
          .describe('Pages (and /metrics when it shares their port) ask for this; /healthz and /readyz never do.'),
        public_url: z.url().default('http://localhost:8080').describe('Base URL of the pages, used in chat links and the digest.'),
      })
      .default({ port: 8080, host: '127.0.0.1', public_url: 'http://localhost:8080' })
      .describe('The pages and the health endpoints.'),
    connections: z
      .strictObject({
        connect_timeout: duration().default(30).describe('Longest wait for a PostgreSQL connection (connect and sign-in) before the step fails.'),
        lock_timeout: duration().default(60).describe('Longest any statement waits for a lock (a table locked by a migration or a stuck job) before it fails.'),
        idle_in_transaction_timeout: duration()
          .default(600)
          .describe('PostgreSQL ends a session left idle inside a transaction this long, releasing its locks.'),
        state_statement_timeout: duration().default(600).describe("Longest one statement on plumbline's own schema may run (warehouse statements: warehouse.statement_timeout)."),
        keepalive_idle: duration().default(60).describe('TCP keepalive: idle time before the first probe, so a connection to a vanished server is noticed.'),
      })
      .default({ connect_timeout: 30, lock_timeout: 60, idle_in_transaction_timeout: 600, state_statement_timeout: 600, keepalive_idle: 60 })
      .describe('Time limits on every PostgreSQL connection, so a hung or locked database fails the pass (retried at the next tick) instead of hanging it.'),
  })
  .meta({ title: 'plumbline.yaml', description: 'plumbline: warehouse mapping, timezone, owners, delivery and schedule.' });
export type MainConfigInput = z.input<typeof mainSchema>;
export type MainConfig = z.output<typeof mainSchema>;

const scalar = z.union([z.string(), z.number(), z.boolean()]);

const paramContract = z
  .strictObject({
    type: z.enum(['string', 'integer', 'number', 'boolean', 'object', 'array']).describe('JSON type of the value.'),
    enum: z.array(scalar).min(1).optional().describe('The only values allowed.'),
    min: z.number().optional().describe('Smallest number allowed.'),
    max: z.number().optional().describe('Largest number allowed.'),
    required: z.boolean().default(false).describe('Every event must carry the key.'),
    nullable: z.boolean().default(false).describe('JSON null is an allowed value.'),
  })
  .superRefine((contract, ctx) => {
    if (contract.min !== undefined && contract.max !== undefined && contract.min > contract.max) {
      ctx.addIssue({ code: 'custom', path: ['max'], message: 'expected max at or above min', params: { found: `${contract.max}, below min ${contract.min}` } });
    }
  });

const step = z.strictObject({
  name: slug().describe('Step name, used in messages and pages.'),
  event: z.string().min(1).describe('Event that marks the step.'),
  where: z
    .record(z.string().min(1), z.union([scalar, z.array(scalar).min(1)]))
    .default({})
    .describe('Parameter values the event must carry: a value, or a list of accepted values.'),
});

const mute = z
  .strictObject({
    check: slug().describe('Id of the check whose findings are muted.'),
    platform: slug().optional().describe('Only this platform; all when absent.'),
    subject: z.string().optional().describe('Event, step or event.param the mute applies to; all subjects when absent.'),
    until: isoDate('expected an end date written YYYY-MM-DD (required: every mute expires)').describe(
      'Last day muted, YYYY-MM-DD: every mute expires.',
    ),
    reason: z
      .string({ error: (issue) => (issue.input === undefined ? 'expected a reason (required: every mute says why)' : 'expected text') })
      .min(3, { message: 'expected a reason of at least 3 characters' })
      .describe('Why the findings are muted; stored with each finding it covers.'),
  })
  .describe('Findings still recorded, never notified, until the end date.');

/** Options of one check with per-platform overrides, merged and defaulted. */
function checkOptions(module: CheckModule) {
  const base = module.options as z.ZodObject;
  // Overrides name only what differs: their fields must not fall back to defaults (zod's partial() keeps them),
  // or an override of one option would reset the others to their defaults instead of the flow-level values.
  const partial = z.strictObject(
    Object.fromEntries(Object.entries(base.shape).map(([key, field]) => [key, (field instanceof z.ZodDefault ? field.unwrap() : field).optional()])),
  );
  return base
    .extend({
      enabled: z.boolean().default(true).describe('Every registered check runs on every flow unless turned off here.'),
      per_platform: z.record(slug(), partial).default({}).describe('Options that differ on one platform, e.g. android: { ... }.'),
    })
    .transform((value) => {
      const { per_platform: overrides, ...flowLevel } = value as Record<string, unknown> & { per_platform: Record<string, object> };
      const per_platform: Record<string, unknown> = {};
      for (const [platform, override] of Object.entries(overrides)) {
        per_platform[platform] = { ...flowLevel, ...stripUndefined(override) };
      }
      return { ...flowLevel, per_platform };
    })
    .describe(module.description);
}

function stripUndefined(value: object): object {
  return Object.fromEntries(Object.entries(value).filter(([, v]) => v !== undefined));
}

export function flowSchema(checks: readonly CheckModule[]) {
  const checkShape: Record<string, z.ZodType> = {};
  for (const module of checks) checkShape[module.id] = checkOptions(module).optional();
  return z
    .strictObject({
      flow: slug().describe('Id of the flow, used in URLs and messages.'),
      title: z.string().optional().describe('Human name of the flow.'),
      owner: slug().describe('An owner from plumbline.yaml.'),
      steps: z
        .array(step)
        .min(2, { message: 'expected at least two steps (a flow goes from one step to another)' })
        .describe('Ordered steps; a person must pass them in order.'),
      conversion_window: duration().describe('Longest time from the first step to the last, e.g. 30m.'),
      step_time_cap: duration().describe('Step-to-step times above this are left out of timing statistics.'),
      entry: z
        .enum(['first_step_only', 'any_step'])
        .default('first_step_only')
        .describe("first_step_only: the day's cohort is people whose first step happened that day; any_step: people may enter at any step."),
      platforms: z.array(slug()).min(1).describe('Platforms the flow runs on, from warehouse.platforms.'),
      events: z
        .record(
          z.string().min(1),
          z.strictObject({ params: z.record(z.string().min(1), paramContract).default({}).describe('Declared parameters, by key.') }),
        )
        .default({})
        .describe('Declared parameter contract per event.'),
      watch: z.array(z.string().min(1)).default([]).describe('Extra events to watch besides the step events.'),
      checks: z
        .strictObject(checkShape)
        .default({})
        .transform((given: Record<string, unknown>) => {
          const resolved: Record<string, unknown> = {};
          for (const module of checks) resolved[module.id] = given[module.id] ?? checkOptions(module).parse({});
          return resolved;
        })
        .describe('Options per check; every check runs with its defaults unless given here.'),
      calendar: z.array(calendarEntry).default([]).describe('Expected highs and lows of this flow (campaigns).'),
      mutes: z.array(mute).default([]).describe('Findings kept out of chat until an end date, each with a reason; they are still judged and recorded.'),
    })
    .meta({ title: 'plumbline flow', description: 'One flow: its ordered steps, platforms, parameter contracts, check options, calendar and mutes.' });
}
export type FlowConfig = z.output<ReturnType<typeof flowSchema>>;
