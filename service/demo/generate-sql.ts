/**
 * The SQL that turns one day's plan into events, set-based inside PostgreSQL:
 * `generate_series` makes one row per journey, hashed draws decide who the
 * person is and what they do, and a lateral VALUES list expands each journey
 * into its events. Randomness is `hashint4extended(slot, stream)`, where each
 * stream is a 64-bit hash of (seed, day, kind, platform) or (seed, platform), so
 * the result depends only on those and the journey's slot, never on row order
 * or on how the work is split. (`hashint8extended` would not do as the per-row
 * hash: it folds its input to 32 bits first, so nearby keys collide.)
 */
import { Params, quoteIdent, quoteQualified, type Query } from '../db/sql.js';
import {
  CANADA_DECLINE_SHARE,
  riderPopulation,
  type DayPlan,
  type DayRange,
  type JourneyKind,
  type PlatformDay,
  type PlatformModel,
} from './model.js';

/** The events table, as the team's warehouse would have it (no primary key). */
export function createTableQueries(table: string): Query[] {
  const name = quoteQualified(table);
  return [
    {
      text: `create table ${name} (
  occurred_at timestamptz not null,
  event_name text not null,
  user_id text,
  device_id text,
  platform text,
  app_version text,
  props jsonb,
  country text,
  channel text
)`,
      values: [],
    },
  ];
}

/** The index every query of plumbline needs: a range on the time column. */
export function createIndexQuery(table: string): Query {
  // An index lives in its table's schema and its name may not be qualified.
  const bare = table.split('.').pop() ?? table;
  return { text: `create index ${quoteIdent(`${bare}_occurred_at_idx`)} on ${quoteQualified(table)} (occurred_at)`, values: [] };
}

/** Independent streams of hashed draws. */
const STREAMS = ['journey', 'person', 'user', 'device', 'new_device'] as const;
type Stream = (typeof STREAMS)[number];

/** Pieces of every draw and pick, collecting parameters as the text is assembled. */
class Sql {
  readonly p = new Params();
  constructor(readonly seed: number) {}

  /** A 64-bit hash seed for one stream of draws; PostgreSQL folds it once, at planning. */
  stream(purpose: Stream, key: number): string {
    return `hashint8extended(${this.p.add(String(key))}::bigint, ${this.p.add(String(this.seed * 8 + STREAMS.indexOf(purpose)))}::bigint)`;
  }

  num(value: number): string {
    return `${this.p.add(value)}::float8`;
  }
  int(value: number): string {
    return `${this.p.add(value)}::int`;
  }
  bool(value: boolean): string {
    return `${this.p.add(value)}::boolean`;
  }
  text(value: string | null): string {
    return `${this.p.add(value)}::text`;
  }
  json(value: object): string {
    return `${this.p.add(JSON.stringify(value))}::jsonb`;
  }

  /** Uniform in (0, 1) from an int key below 2^25; `k` selects one of 64 independent draws per key. */
  uniform(key: string, k: number, stream: string): string {
    return `((hashint4extended(${key} * 64 + ${k}, ${stream}) & 2147483647)::float8 + 0.5) / 2147483648.0`;
  }

  /** Standard normal from two uniform columns (Box-Muller). */
  normal(u1: string, u2: string): string {
    return `(sqrt(-2 * ln(${u1})) * cos(2 * pi() * ${u2}))`;
  }

  /** Seconds drawn from a log-normal with the given median and log-scale spread. */
  lognormal(median: number, sigma: number, u1: string, u2: string): string {
    return `(${this.num(median)} * exp(${this.num(sigma)} * ${this.normal(u1, u2)}))`;
  }

  /** One of `choices` by cumulative share of a uniform column; the last choice takes the remainder. */
  pick(u: string, choices: ReadonlyArray<readonly [string, number]>): string {
    let cumulative = 0;
    const arms = choices.slice(0, -1).map(([value, share]) => {
      cumulative += share;
      return `when ${u} < ${this.num(cumulative)} then ${this.text(value)}`;
    });
    const last = choices[choices.length - 1];
    if (!last) throw new Error('pick needs at least one choice');
    return `case ${arms.join(' ')} else ${this.text(last[0])} end`;
  }

  /**
   * Local wall-clock seconds of the day from a mixture of daily peaks
   * ([share, mean hour, spread in hours]) and a uniform 06:00-24:00 rest,
   * folded into the day (a peak's tail past midnight lands early that morning).
   */
  timeOfDay(mix: string, u1: string, u2: string, rest: string, peaks: ReadonlyArray<readonly [number, number, number]>): string {
    let cumulative = 0;
    const z = this.normal(u1, u2);
    const arms = peaks.map(([share, hour, spread]) => {
      cumulative += share;
      return `when ${mix} < ${this.num(cumulative)} then (${this.num(hour)} + ${this.num(spread)} * ${z}) * 3600`;
    });
    return `mod((case ${arms.join(' ')} else (6 + 18 * ${rest}) * 3600 end + 86400)::numeric, 86400)::float8`;
  }

  /** The instant of local wall-clock `seconds` on the date `day` in `timezone`. */
  localInstant(day: string, timezone: string, seconds: string): string {
    return `((${day} + ${seconds} * interval '1 second') at time zone ${timezone})`;
  }

  /** Whether instant `at` falls on the local days of `range`; false when there is none. */
  within(at: string, range: DayRange | null, timezone: string): string {
    if (!range) return 'false';
    const bound = (day: string, plus: number) => `(select (${this.text(day)}::date + ${plus})::timestamp at time zone ${timezone})`;
    return `(${at} >= ${bound(range.from, 0)} and ${at} < ${bound(range.to, 1)})`;
  }

  /** App version from a person's update eagerness: newest release they have, else a base version. */
  version(platform: PlatformDay, eager: string, patch: string): string {
    const base = platform.platform.baseVersions;
    if (base.length === 0) return 'null::text';
    const fallback = `(${this.p.add(base)}::text[])[1 + floor(${patch} * ${base.length})::int]`;
    if (platform.versions.length === 0) return fallback;
    const arms = platform.versions.map((share) => `when ${eager} < ${this.num(share.threshold)} then ${this.text(share.version)}`);
    return `case ${arms.join(' ')} else ${fallback} end`;
  }

  /** 40 bits of hash, as ids look in a real table. */
  userId(key: string, stream: string): string {
    return `${this.text('u_')} || lpad(to_hex(hashint4extended(${key}, ${stream}) & 1099511627775), 10, '0')`;
  }
  /** 64 bits of hash. */
  deviceId(key: string, stream: string): string {
    return `lpad(to_hex(hashint4extended(${key}, ${stream})), 16, '0')`;
  }
}

/** The city is close to the Canadian border: a tenth of riders pay from Canada. */
const COUNTRIES: ReadonlyArray<readonly [string, number]> = [
  ['US', 0.82],
  ['CA', 0.1],
  ['MX', 0.03],
  ['GB', 0.02],
  ['DE', 0.015],
  ['FR', 0.015],
];
const CHANNELS: ReadonlyArray<readonly [string, number]> = [
  ['direct', 0.5],
  ['search_ad', 0.2],
  ['email', 0.18],
  ['referral', 0.12],
];
const RIDER_TYPES: ReadonlyArray<readonly [string, number]> = [
  ['adult', 0.7],
  ['student', 0.18],
  ['senior', 0.12],
];
const FARE_ZONES: ReadonlyArray<readonly [string, number]> = [
  ['A', 0.45],
  ['AB', 0.4],
  ['ABC', 0.15],
];
/** Monthly pass prices in cents; reduced fares (students, seniors) pay half. */
const PRICES: Record<string, number> = { A: 9700, AB: 12700, ABC: 16500 };
const APP_OPEN_SOURCES: ReadonlyArray<readonly [string, number]> = [
  ['launcher', 0.78],
  ['notification', 0.15],
  ['deeplink', 0.07],
];
const REFERRERS: Record<string, ReadonlyArray<readonly [string, number]>> = {
  web: [
    ['home', 0.45],
    ['search', 0.25],
    ['email', 0.15],
    ['account', 0.15],
  ],
  app: [
    ['home', 0.6],
    ['menu', 0.25],
    ['notification', 0.15],
  ],
};
const MAP_LAYERS: ReadonlyArray<readonly [string, number]> = [
  ['lines', 0.5],
  ['stations', 0.3],
  ['service_alerts', 0.2],
];
/** Daily peaks: [share, mean local hour, spread in hours]; the rest is spread over 06:00-24:00. */
const SHOPPING_PEAKS = [
  [0.38, 8.3, 1.4],
  [0.4, 18.5, 2.4],
] as const;
const COMMUTE_PEAKS = [
  [0.5, 7.8, 1.0],
  [0.4, 17.3, 1.2],
] as const;

/** Share of signed-in people with a second device whose clock runs behind (out-of-order timestamps). */
const TWO_DEVICES = 0.05;
/** Share of app pass journeys that start with an app launch (the others begin in an open app). */
const APP_OPEN_BEFORE_PASS = 0.6;
/** Share of pass journeys that view the intro twice, and of zone pickers viewed twice. */
const REPEAT_INTRO = 0.06;
const REPEAT_ZONE = 0.08;
/** Share of pass journeys paused for 30-120 minutes before paying: completions after the window. */
const RESUMED_LATER = 0.012;
/** Sign-up continuation: form -> submitted, submitted -> e-mail verified. */
const SIGNUP_SUBMITTED = 0.72;
const SIGNUP_VERIFIED = 0.8;
/** App sessions with a ticket scan, of those a return trip later in the day, and with a map view. */
const SCAN_SHARE = 0.8;
const RETURN_TRIP = 0.35;
const MAP_IN_APP = 0.3;

export interface UnitSpec {
  plan: DayPlan;
  platform: PlatformDay;
  /** Journeys with slot number = part (mod parts), 0 <= part < parts. */
  part: number;
  parts: number;
  table: string;
  timezone: string;
  seed: number;
  /** Sizes the rider population, so people return about as often at any scale. */
  scale: number;
}

/** What every kind's SQL needs; the string fields are SQL expressions. */
interface KindContext {
  sql: Sql;
  spec: UnitSpec;
  model: PlatformModel;
  /** The day as a date. */
  day: string;
  tz: string;
  /** The raw platform value written to the table. */
  raw: string;
  /** Whether the platform is an app (sends app_open, ticket scans). */
  app: string;
  /** Events at or after this instant are not delivered. */
  cutoff: string;
}

/** A kind of journey: its stages as named CTEs, in order, and the select that expands the last stage into events. */
interface KindSql {
  stages: Array<[name: string, body: string]>;
  select: string;
}

/**
 * One insert covering a slice of one platform's journeys of one day, all three
 * kinds. Each stage ends in `offset 0`, which keeps PostgreSQL from inlining it
 * into the next: inlined, a column used three times would be hashed three times.
 */
export function unitInsertQuery(spec: UnitSpec): Query {
  const sql = new Sql(spec.seed);
  const tz = sql.text(spec.timezone);
  const model = spec.platform.platform;
  const stop = spec.plan.incidents.collectorStop;
  // Scalar subqueries run once: a text-to-date cast is only stable, so PostgreSQL would not fold it and would redo it per row.
  const cutoff = stop ? `(select (${sql.text(stop.day)}::date + ${sql.text(stop.time)}::time) at time zone ${tz})` : `'infinity'::timestamptz`;
  const ctx: KindContext = {
    sql,
    spec,
    model,
    day: `(select ${sql.text(spec.plan.day)}::date)`,
    tz,
    raw: sql.text(model.raw),
    app: sql.bool(model.id !== 'web'),
    cutoff,
  };
  const kinds = [passJourneys(ctx), signupJourneys(ctx), otherSessions(ctx)];
  const stages = kinds.flatMap((kind) => kind.stages).map(([name, body]) => `${name} as (\n${body}\n  offset 0\n)`);
  const text = `with ${stages.join(',\n')}
insert into ${quoteQualified(spec.table)} (occurred_at, event_name, user_id, device_id, platform, app_version, props, country, channel)
${kinds.map((kind) => kind.select).join('\nunion all\n')}`;
  return { text, values: sql.p.values };
}

const KIND_INDEX: Record<JourneyKind, number> = { pass: 0, signup: 1, other: 2 };

/** Stream of a kind's journeys on this day and platform. */
function journeyStream(ctx: KindContext, kind: JourneyKind, purpose: Stream = 'journey'): string {
  return ctx.sql.stream(purpose, ctx.spec.plan.dayNumber * 16 + KIND_INDEX[kind] * 4 + ctx.model.index);
}

/** This unit's slice of a kind's journey slots (1-based, at most 2^25 a day). */
function journeySlots(ctx: KindContext, kind: JourneyKind): string {
  const { spec, sql } = ctx;
  return `generate_series(${sql.int(spec.part + 1)}, ${sql.int(spec.platform.journeys[kind])}, ${sql.int(spec.parts)}) a(slot)`;
}

/** Draw columns j1..jn of the journey slot `a.slot`. */
function journeyDraws(ctx: KindContext, kind: JourneyKind, n: number): string {
  const stream = journeyStream(ctx, kind);
  return Array.from({ length: n }, (_, i) => `${ctx.sql.uniform('a.slot', i + 1, stream)} as j${i + 1}`).join(', ');
}

/**
 * The pass riders of this platform, drawn from a fixed population (person
 * number `pid`): pass journeys and ticket/map sessions share it.
 */
function riderSlots(ctx: KindContext, kind: JourneyKind): string {
  const { sql, spec } = ctx;
  const population = riderPopulation(ctx.model, spec.scale);
  return `  select a.slot, floor(${sql.uniform('a.slot', 0, journeyStream(ctx, kind))} * ${sql.int(population)})::int as pid
  from ${journeySlots(ctx, kind)}`;
}

/** Person draws of `a.pid`: the same for a person on every day. */
function personDraws(ctx: KindContext): string {
  const { sql } = ctx;
  const stream = sql.stream('person', ctx.model.index);
  const names = ['anon', 'two', 'skew', 'country', 'channel', 'eager', 'patch', 'rider'];
  return names.map((name, i) => `${sql.uniform('a.pid', i + 1, stream)} as p_${name}`).join(', ');
}

/** Identity, dimensions and app version of a rider from the person draws of `b`. */
function riderColumns(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const signedIn = `b.p_anon >= ${sql.num(ctx.model.anonymousShare)}`;
  const devices = sql.stream('device', ctx.model.index);
  return `case when ${signedIn} then ${sql.userId('b.pid', sql.stream('user', ctx.model.index))} end as user_id,
    ${sql.deviceId('b.pid * 2', devices)} as device1,
    case when ${signedIn} and b.p_two < ${sql.num(TWO_DEVICES)} then ${sql.deviceId('b.pid * 2 + 1', devices)} end as device2,
    b.p_skew * 120 - 90 as skew,
    ${sql.pick('b.p_country', COUNTRIES)} as country,
    ${sql.pick('b.p_channel', CHANNELS)} as channel,
    ${sql.version(spec.platform, 'b.p_eager', 'b.p_patch')} as version`;
}

const seconds = (expr: string) => `(${expr}) * interval '1 second'`;

/**
 * The monthly pass funnel: intro, zone picker (with zone_selected), rider
 * details, pay review, purchase result. The second device of a person (when
 * used) sends the later steps with its own clock, so some arrive out of order.
 */
function passJourneys(ctx: KindContext): KindSql {
  const { sql, model } = ctx;
  const rates = model.conversion;
  const incidents = ctx.spec.plan.incidents;
  const referrers = REFERRERS[model.id === 'web' ? 'web' : 'app']!;
  const reach1 = `b.j5 < ${sql.num(rates.zone)}`;
  const reach2 = `${reach1} and b.j6 < ${sql.num(rates.rider)}`;
  const reach3 = `${reach2} and b.j7 < ${sql.num(rates.review)}`;
  const price = `case d.zone ${Object.entries(PRICES).map(([zone, cents]) => `when ${sql.text(zone)} then ${sql.int(cents)}`).join(' ')} end`;
  const adult = `d.rider_type = ${sql.text('adult')}`;
  const zoneKey = `case when coalesce(j.version = ${sql.text(incidents.renameZoneVersion)}, false) then ${sql.text('zone')} else ${sql.text('fare_zone')} end`;
  const shownView = (name: string) => sql.json({ view: name });
  const shown = sql.text('screen_shown');
  const result = sql.text('pass_purchase_result');

  return {
    stages: [
      ['pass_slots', riderSlots(ctx, 'pass')],
      ['pass_draws', `  select a.slot, a.pid, ${personDraws(ctx)}, ${journeyDraws(ctx, 'pass', 32)}\n  from pass_slots a`],
      [
        'pass_people',
        `  select b.*,
    ${riderColumns(ctx)},
    ${sql.pick('b.p_rider', RIDER_TYPES)} as rider_type,
    ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j1', 'b.j2', 'b.j3', 'b.j4', SHOPPING_PEAKS))} as at0,
    ${reach1} as reach1,
    ${reach2} as reach2,
    ${reach3} as reach3,
    case when ${reach3} then
      case when b.j8 < ${sql.num(rates.approved)} then ${sql.text('approved')}
           when b.j8 < ${sql.num(rates.approved + rates.declined)} then ${sql.text('declined')}
           when b.j8 < ${sql.num(rates.approved + rates.declined + rates.cancelled)} then ${sql.text('cancelled')} end
    end as outcome,
    ${sql.lognormal(12, 0.8, 'b.j10', 'b.j11')} as g1,
    ${sql.lognormal(25, 0.9, 'b.j12', 'b.j13')} as g2,
    ${sql.lognormal(40, 1.0, 'b.j14', 'b.j15')} as g3,
    ${sql.lognormal(35, 0.9, 'b.j16', 'b.j17')} + case when b.j18 < ${sql.num(RESUMED_LATER)} then 1800 + 5400 * b.j19 else 0 end as g4,
    b.j20 < 0.5 and b.p_two < ${sql.num(TWO_DEVICES)} and b.p_anon >= ${sql.num(model.anonymousShare)} as switch,
    ${sql.pick('b.j25', FARE_ZONES)} as zone,
    ${sql.pick('b.j28', APP_OPEN_SOURCES)} as source,
    ${sql.pick('b.j29', referrers)} as referrer
  from pass_draws b`,
      ],
      [
        'pass_times',
        `  select c.*,
    c.at0 + ${seconds('c.g1')} as r1,
    c.at0 + ${seconds('c.g1 + c.g2')} as r2,
    c.at0 + ${seconds('c.g1 + c.g2 + c.g3')} as r3,
    c.at0 + ${seconds('c.g1 + c.g2 + c.g3 + c.g4')} as r4,
    case when c.switch then ${seconds('c.skew')} else interval '0' end as sk
  from pass_people c`,
      ],
      [
        'pass_results',
        `  select t.*,
    case when t.outcome = ${sql.text('approved')} and t.country = ${sql.text('CA')} and ${sql.within('t.r4 + t.sk', incidents.canadaDeclines, ctx.tz)}
              and t.j30 < ${sql.num(CANADA_DECLINE_SHARE)} then ${sql.text('declined')} else t.outcome end as result
  from pass_times t`,
      ],
      [
        'pass_journeys',
        `  select d.*,
    jsonb_build_object(
      ${sql.text('outcome')}, d.result,
      ${sql.text('amount_cents')}, case when ${adult} then ${price} else ${price} / 2 end,
      ${sql.text('pass_type')}, case when ${adult} then ${sql.text('monthly')} else ${sql.text('monthly_reduced')} end
    ) as result_props
  from pass_results d`,
      ],
    ],
    select: `select e.at, e.name, j.user_id, case when e.second then j.device2 else j.device1 end, ${ctx.raw}, j.version, e.props, j.country, j.channel
from pass_journeys j
cross join lateral (values
  (j.at0 - ${seconds('2 + 28 * j.j26')}, ${sql.text('app_open')}, jsonb_build_object(${sql.text('source')}, j.source),
    ${ctx.app} and j.j32 < ${sql.num(APP_OPEN_BEFORE_PASS)}, false),
  (j.at0, ${shown}, jsonb_build_object(${sql.text('view')}, ${sql.text('pass_intro')}, ${sql.text('referrer')}, j.referrer), true, false),
  (j.at0 + ${seconds('j.g1 * j.j22')}, ${shown}, ${shownView('pass_intro')}, j.j21 < ${sql.num(REPEAT_INTRO)}, false),
  (j.r1, ${shown}, ${shownView('zone_picker')}, j.reach1, false),
  (j.r1 + ${seconds('j.g2 * j.j24')}, ${shown}, ${shownView('zone_picker')}, j.reach1 and j.j23 < ${sql.num(REPEAT_ZONE)}, false),
  (j.r1 + ${seconds('j.g2 * (0.3 + 0.5 * j.j27)')}, ${sql.text('zone_selected')},
    jsonb_build_object(${zoneKey}, j.zone, ${sql.text('rider_type')}, j.rider_type),
    j.reach2 or (j.reach1 and j.j9 < ${sql.num(0.4)}), false),
  (j.r2 + j.sk, ${shown}, ${shownView('rider_details')},
    j.reach2 and not coalesce(j.version = ${sql.text(incidents.dropRiderVersion)}, false), j.switch),
  (j.r3 + j.sk, ${shown}, ${shownView('pay_review')},
    j.reach3 and not ${sql.within('j.r3 + j.sk', model.id === 'web' ? incidents.webPayReviewOutage : null, ctx.tz)}, j.switch),
  (j.r4 + j.sk, ${result}, j.result_props, j.result is not null, j.switch),
  (j.r4 + j.sk + ${seconds('0.003 + 0.04 * j.j31')}, ${result}, j.result_props,
    j.result is not null and ${sql.within('j.r4 + j.sk', model.id === 'android' ? incidents.androidDuplicates : null, ctx.tz)}, j.switch)
) as e(at, name, props, keep, second)
where e.keep and e.at < ${ctx.cutoff}`,
  };
}

/**
 * Account sign-up: form, submitted, e-mail verified (minutes to hours later).
 * A sign-up comes from a new device not yet signed in: the device is the person throughout.
 */
function signupJourneys(ctx: KindContext): KindSql {
  const { sql, spec, model } = ctx;
  return {
    stages: [
      ['signup_draws', `  select a.slot, ${journeyDraws(ctx, 'signup', 16)}\n  from ${journeySlots(ctx, 'signup')}`],
      [
        'signup_journeys',
        `  select b.*,
    ${sql.deviceId('b.slot', journeyStream(ctx, 'signup', 'new_device'))} as device1,
    ${sql.pick('b.j1', COUNTRIES)} as country,
    ${sql.pick('b.j2', CHANNELS)} as channel,
    ${sql.version(spec.platform, 'b.j3', 'b.j4')} as version,
    ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j5', 'b.j6', 'b.j7', 'b.j8', SHOPPING_PEAKS))} as at0,
    b.j9 < ${sql.num(SIGNUP_SUBMITTED)} as reach1,
    b.j9 < ${sql.num(SIGNUP_SUBMITTED)} and b.j10 < ${sql.num(SIGNUP_VERIFIED)} as reach2,
    ${sql.lognormal(50, 0.8, 'b.j11', 'b.j12')} as g1,
    ${sql.lognormal(240, 1.4, 'b.j13', 'b.j14')} as g2,
    ${sql.pick('b.j15', model.signupMethods)} as method
  from signup_draws b`,
      ],
    ],
    select: `select e.at, e.name, null::text, j.device1, ${ctx.raw}, j.version, e.props, j.country, j.channel
from signup_journeys j
cross join lateral (values
  (j.at0 - ${seconds('2 + 20 * j.j16')}, ${sql.text('app_open')}, ${sql.json({ source: 'launcher' })}, ${ctx.app}),
  (j.at0, ${sql.text('screen_shown')}, ${sql.json({ view: 'signup_form' })}, true),
  (j.at0 + ${seconds('j.g1')}, ${sql.text('signup_submitted')}, jsonb_build_object(${sql.text('method')}, j.method), j.reach1),
  (j.at0 + ${seconds('j.g1 + j.g2')}, ${sql.text('email_verified')}, ${sql.json({})}, j.reach2)
) as e(at, name, props, keep)
where e.keep and e.at < ${ctx.cutoff}`,
  };
}

/** Riders using their pass: ticket scans around commuting hours (apps only) and map views. */
function otherSessions(ctx: KindContext): KindSql {
  const { sql } = ctx;
  const scan = sql.text('ticket_scan');
  const line = (u: string) => `jsonb_build_object(${sql.text('line')}, ${sql.text('L')} || (1 + floor(${u} * 9))::int)`;
  return {
    stages: [
      ['other_slots', riderSlots(ctx, 'other')],
      ['other_draws', `  select a.slot, a.pid, ${personDraws(ctx)}, ${journeyDraws(ctx, 'other', 12)}\n  from other_slots a`],
      [
        'other_sessions',
        `  select b.*,
    ${riderColumns(ctx)},
    ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j1', 'b.j2', 'b.j3', 'b.j4', COMMUTE_PEAKS))} as at0,
    ${sql.pick('b.j8', MAP_LAYERS)} as layer
  from other_draws b`,
      ],
    ],
    select: `select e.at, e.name, j.user_id, case when e.second then j.device2 else j.device1 end, ${ctx.raw}, j.version, e.props, j.country, j.channel
from other_sessions j
cross join lateral (values
  (j.at0, ${sql.text('app_open')}, ${sql.json({ source: 'launcher' })}, ${ctx.app}, false),
  (j.at0 + ${seconds('5 + 55 * j.j5')}, ${scan}, ${line('j.j9')}, ${ctx.app} and j.j6 < ${sql.num(SCAN_SHARE)}, false),
  (j.at0 + ${seconds('(8 + 3 * (j.j10 - 0.5)) * 3600')}, ${scan}, ${line('j.j11')},
    ${ctx.app} and j.j6 < ${sql.num(SCAN_SHARE * RETURN_TRIP)}, j.device2 is not null and j.j12 < 0.5),
  (j.at0 + ${seconds('20 + 180 * j.j7')}, ${sql.text('map_view')}, jsonb_build_object(${sql.text('layer')}, j.layer),
    not ${ctx.app} or j.j7 < ${sql.num(MAP_IN_APP)}, false)
) as e(at, name, props, keep, second)
where e.keep and e.at < ${ctx.cutoff}`,
  };
}
