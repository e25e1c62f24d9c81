/**
 * The SQL that turns one day's plan into events, set-based inside PostgreSQL:
 * `generate_series` makes one row per journey, hashed draws decide who the
 * person is and what they do, and a lateral VALUES list expands each journey
 * into its events. Randomness is `hashint8extended(key, seed)`, so the result
 * depends only on (seed, day, platform, journey), never on row order or on how
 * the work is split.
 */
import { Params, quoteIdent, quoteQualified, type Query } from '../db/sql.js';
import { CANADA_DECLINE_SHARE, POOL_DAYS, type DayPlan, type JourneyKind, type PlatformDay } from './model.js';

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

/** Pieces of every draw and pick, collecting parameters as the text is assembled. */
class Sql {
  readonly p = new Params();
  /** Separate hash streams: journeys, people, ids. */
  readonly journeySeed: string;
  readonly personSeed: string;
  readonly idSeed: string;

  constructor(seed: number) {
    this.journeySeed = `${this.p.add(String(seed * 4))}::bigint`;
    this.personSeed = `${this.p.add(String(seed * 4 + 1))}::bigint`;
    this.idSeed = `${this.p.add(String(seed * 4 + 2))}::bigint`;
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

  /** Uniform in (0, 1) from a bigint key; `k` selects one of 64 independent draws per key. */
  uniform(key: string, k: number, seed: string): string {
    return `((hashint8extended(${key} * 64 + ${k}, ${seed}) & 2147483647)::float8 + 0.5) / 2147483648.0`;
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
   * folded into the day.
   */
  timeOfDay(mix: string, u1: string, u2: string, rest: string, peaks: ReadonlyArray<readonly [number, number, number]>): string {
    let cumulative = 0;
    const z = this.normal(u1, u2);
    const arms = peaks.map(([share, hour, spread]) => {
      cumulative += share;
      return `when ${mix} < ${this.num(cumulative)} then (${this.num(hour)} + ${this.num(spread)} * ${z}) * 3600`;
    });
    const seconds = `(case ${arms.join(' ')} else (6 + 18 * ${rest}) * 3600 end)`;
    return `(${seconds} - 86400 * floor(${seconds} / 86400))`;
  }

  /** The instant of local wall-clock `seconds` on `day` in `timezone`. */
  localInstant(day: string, timezone: string, seconds: string): string {
    return `((${day}::date + ${seconds} * interval '1 second') at time zone ${timezone})`;
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

  userId(pid: string): string {
    return `'u_' || lpad(to_hex(hashint8extended(${pid}, ${this.idSeed}) & 1099511627775), 10, '0')`;
  }
  deviceId(key: string): string {
    return `lpad(to_hex(hashint8extended(${key}, ${this.idSeed} + 1)), 16, '0')`;
  }
}

const COUNTRIES: ReadonlyArray<readonly [string, number]> = [
  ['US', 0.86],
  ['CA', 0.06],
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

/** One insert covering a slice of one platform's journeys of one day, all three kinds. */
export function unitInsertQuery(spec: UnitSpec): Query {
  const sql = new Sql(spec.seed);
  const day = sql.text(spec.plan.day);
  const tz = sql.text(spec.timezone);
  const cutoff = `coalesce((${day}::date + ${sql.text(spec.plan.incidents.cutoffLocalTime)}::time) at time zone ${tz}, 'infinity'::timestamptz)`;
  const ctx: KindContext = { sql, spec, day, tz, raw: sql.text(spec.platform.platform.raw), cutoff };
  const selects = [passSelect(ctx), signupSelect(ctx), otherSelect(ctx)];
  const text = `insert into ${quoteQualified(spec.table)}
  (occurred_at, event_name, user_id, device_id, platform, app_version, props, country, channel)
${selects.join('\nunion all\n')}`;
  return { text, values: sql.p.values };
}

interface KindContext {
  sql: Sql;
  spec: UnitSpec;
  day: string;
  tz: string;
  raw: string;
  cutoff: string;
}

const KIND_INDEX: Record<JourneyKind, number> = { pass: 0, signup: 1, other: 2 };

/** Journey keys of this unit's slice: (day, kind, platform) in the high bits, the slot in the low 26. */
function slots(ctx: KindContext, kind: JourneyKind): string {
  const { spec, sql } = ctx;
  const prefix = (BigInt(spec.plan.dayNumber) * 16n + BigInt(KIND_INDEX[kind] * 4 + spec.platform.platform.index)) << 26n;
  const count = spec.platform.journeys[kind];
  return `select ${sql.p.add(prefix.toString())}::bigint + g as jkey
    from generate_series(${sql.int(spec.part + 1)}, ${sql.int(count)}, ${sql.int(spec.parts)}) g`;
}

/** Draw columns j1..jn of a journey key. */
function journeyDraws(ctx: KindContext, n: number): string {
  return Array.from({ length: n }, (_, i) => `${ctx.sql.uniform('a.jkey', i + 1, ctx.sql.journeySeed)} as j${i + 1}`).join(',\n      ');
}

/** The pass-rider population this platform draws from: pass journeys and ticket/map sessions share it. */
function personId(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const pool = Math.max(1, Math.round(spec.platform.platform.base.pass * spec.scale * POOL_DAYS));
  const base = BigInt(spec.platform.platform.index) << 32n;
  return `${sql.p.add(base.toString())}::bigint + floor(${sql.uniform('s.jkey', 0, sql.journeySeed)} * ${sql.int(pool)})::bigint`;
}

/** Person columns of a pass rider: stable per person id across days. */
function personDraws(ctx: KindContext): string {
  const { sql } = ctx;
  const names = ['anon', 'two', 'skew', 'country', 'channel', 'eager', 'patch', 'rider'];
  return names.map((name, i) => `${sql.uniform('a.pid', i + 1, sql.personSeed)} as p_${name}`).join(',\n      ');
}

/** Identity and dimensions of a rider from the person draws. */
function riderColumns(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const anonymous = `b.p_anon < ${sql.num(spec.platform.platform.anonymousShare)}`;
  return `case when ${anonymous} then null else ${sql.userId('b.pid')} end as user_id,
      ${sql.deviceId('b.pid * 2')} as device1,
      case when not (${anonymous}) and b.p_two < ${sql.num(TWO_DEVICES)} then ${sql.deviceId('b.pid * 2 + 1')} end as device2,
      (b.p_skew * 120 - 90) as skew,
      ${sql.pick('b.p_country', COUNTRIES)} as country,
      ${sql.pick('b.p_channel', CHANNELS)} as channel,
      ${sql.version(spec.platform, 'b.p_eager', 'b.p_patch')} as version`;
}

function isApp(ctx: KindContext): boolean {
  return ctx.spec.platform.platform.id !== 'web';
}

const seconds = (expr: string) => `(${expr}) * interval '1 second'`;

function passSelect(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const model = spec.platform.platform;
  const rates = model.conversion;
  const incidents = spec.plan.incidents;
  const app = sql.bool(isApp(ctx));
  const referrers = REFERRERS[isApp(ctx) ? 'app' : 'web']!;
  const resultProps = `jsonb_build_object(${sql.text('outcome')}, j.result, ${sql.text('amount_cents')}, j.amount, ${sql.text('pass_type')}, j.pass_type)`;
  const zoneKey = `case when coalesce(j.version = ${sql.text(incidents.renameZoneVersion)}, false) then ${sql.text('zone')} else ${sql.text('fare_zone')} end`;
  const screen = (name: string) => sql.json({ screen: name });
  const [approved, declined, cancelled] = [rates.approved, rates.approved + rates.declined, rates.approved + rates.declined + rates.cancelled];
  const reach1 = `b.j5 < ${sql.num(rates.zone)}`;
  const reach2 = `${reach1} and b.j6 < ${sql.num(rates.rider)}`;
  const reach3 = `${reach2} and b.j7 < ${sql.num(rates.review)}`;
  const price = `case c.zone ${Object.entries(PRICES).map(([zone, cents]) => `when ${sql.text(zone)} then ${sql.int(cents)}`).join(' ')} end`;
  const adult = `c.rider_type = ${sql.text('adult')}`;

  return `select e.at, e.name, j.user_id, case when e.second then j.device2 else j.device1 end, ${ctx.raw}, j.version, e.props, j.country, j.channel
from (
  select c.*,
    c.at0 + ${seconds('c.g1')} as r1,
    c.at0 + ${seconds('c.g1 + c.g2')} as r2,
    c.at0 + ${seconds('c.g1 + c.g2 + c.g3')} as r3,
    c.at0 + ${seconds('c.g1 + c.g2 + c.g3 + c.g4')} as r4,
    case when c.switch then ${seconds('c.skew')} else interval '0' end as sk,
    case when c.outcome = ${sql.text('approved')} and c.country = ${sql.text('CA')} and ${sql.bool(incidents.canadaDeclines)}
              and c.j30 < ${sql.num(CANADA_DECLINE_SHARE)} then ${sql.text('declined')} else c.outcome end as result,
    case when ${adult} then ${price} else ${price} / 2 end as amount,
    case when ${adult} then ${sql.text('monthly')} else ${sql.text('monthly_reduced')} end as pass_type
  from (
    select b.*,
      ${riderColumns(ctx)},
      ${sql.pick('b.p_rider', RIDER_TYPES)} as rider_type,
      ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j1', 'b.j2', 'b.j3', 'b.j4', SHOPPING_PEAKS))} as at0,
      ${reach1} as reach1,
      ${reach2} as reach2,
      ${reach3} as reach3,
      case when ${reach3} then
        case when b.j8 < ${sql.num(approved)} then ${sql.text('approved')}
             when b.j8 < ${sql.num(declined)} then ${sql.text('declined')}
             when b.j8 < ${sql.num(cancelled)} then ${sql.text('cancelled')} end
      end as outcome,
      ${sql.lognormal(12, 0.8, 'b.j10', 'b.j11')} as g1,
      ${sql.lognormal(25, 0.9, 'b.j12', 'b.j13')} as g2,
      ${sql.lognormal(40, 1.0, 'b.j14', 'b.j15')} as g3,
      ${sql.lognormal(35, 0.9, 'b.j16', 'b.j17')} + case when b.j18 < ${sql.num(RESUMED_LATER)} then 1800 + 5400 * b.j19 else 0 end as g4,
      b.j20 < 0.5 and b.p_two < ${sql.num(TWO_DEVICES)} and b.p_anon >= ${sql.num(model.anonymousShare)} as switch,
      ${sql.pick('b.j25', FARE_ZONES)} as zone,
      ${sql.pick('b.j28', APP_OPEN_SOURCES)} as source,
      ${sql.pick('b.j29', referrers)} as referrer
    from (
      select a.jkey, a.pid,
      ${personDraws(ctx)},
      ${journeyDraws(ctx, 31)}
      from (select s.jkey, ${personId(ctx)} as pid from (${slots(ctx, 'pass')}) s offset 0) a
      offset 0
    ) b
    offset 0
  ) c
  offset 0
) j
cross join lateral (values
  (j.at0 - ${seconds('2 + 28 * j.j26')}, ${sql.text('app_open')}, jsonb_build_object(${sql.text('source')}, j.source),
    ${app} and j.j30 < ${sql.num(APP_OPEN_BEFORE_PASS)}, false),
  (j.at0, ${sql.text('screen_view')}, jsonb_build_object(${sql.text('screen')}, ${sql.text('pass_intro')}, ${sql.text('referrer')}, j.referrer), true, false),
  (j.at0 + ${seconds('j.g1 * j.j22')}, ${sql.text('screen_view')}, ${screen('pass_intro')}, j.j21 < ${sql.num(REPEAT_INTRO)}, false),
  (j.r1, ${sql.text('screen_view')}, ${screen('zone_picker')}, j.reach1, false),
  (j.r1 + ${seconds('j.g2 * j.j24')}, ${sql.text('screen_view')}, ${screen('zone_picker')}, j.reach1 and j.j23 < ${sql.num(REPEAT_ZONE)}, false),
  (j.r1 + ${seconds('j.g2 * (0.3 + 0.5 * j.j27)')}, ${sql.text('zone_selected')},
    jsonb_build_object(${zoneKey}, j.zone, ${sql.text('rider_type')}, j.rider_type),
    j.reach2 or (j.reach1 and j.j9 < ${sql.num(0.4)}), false),
  (j.r2 + j.sk, ${sql.text('screen_view')}, ${screen('rider_details')},
    j.reach2 and not coalesce(j.version = ${sql.text(incidents.dropRiderVersion)}, false), j.switch),
  (j.r3 + j.sk, ${sql.text('screen_view')}, ${screen('pay_review')},
    j.reach3 and not ${sql.bool(incidents.webPayReviewOutage && model.id === 'web')}, j.switch),
  (j.r4 + j.sk, ${sql.text('pass_purchase_result')}, ${resultProps}, j.result is not null, j.switch),
  (j.r4 + j.sk + ${seconds('0.003 + 0.04 * j.j31')}, ${sql.text('pass_purchase_result')}, ${resultProps},
    j.result is not null and ${sql.bool(incidents.androidDuplicates && model.id === 'android')}, j.switch)
) as e(at, name, props, keep, second)
where e.keep and e.at < ${ctx.cutoff}`;
}

function signupSelect(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const app = sql.bool(isApp(ctx));
  // A sign-up comes from a new device, not yet signed in: the device is the person throughout.
  return `select e.at, e.name, null::text, j.device1, ${ctx.raw}, j.version, e.props, j.country, j.channel
from (
  select b.*,
    ${sql.deviceId('-b.jkey')} as device1,
    ${sql.pick('b.j1', COUNTRIES)} as country,
    ${sql.pick('b.j2', CHANNELS)} as channel,
    ${sql.version(spec.platform, 'b.j3', 'b.j4')} as version,
    ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j5', 'b.j6', 'b.j7', 'b.j8', SHOPPING_PEAKS))} as at0,
    b.j9 < ${sql.num(0.72)} as reach1,
    b.j9 < ${sql.num(0.72)} and b.j10 < ${sql.num(0.8)} as reach2,
    ${sql.lognormal(50, 0.8, 'b.j11', 'b.j12')} as g1,
    ${sql.lognormal(240, 1.4, 'b.j13', 'b.j14')} as g2,
    ${sql.pick('b.j15', spec.platform.platform.signupMethods)} as method
  from (select a.jkey, ${journeyDraws(ctx, 16)} from (${slots(ctx, 'signup')}) a offset 0) b
  offset 0
) j
cross join lateral (values
  (j.at0 - ${seconds('2 + 20 * j.j16')}, ${sql.text('app_open')}, ${sql.json({ source: 'launcher' })}, ${app}),
  (j.at0, ${sql.text('screen_view')}, ${sql.json({ screen: 'signup_form' })}, true),
  (j.at0 + ${seconds('j.g1')}, ${sql.text('signup_submitted')}, jsonb_build_object(${sql.text('method')}, j.method), j.reach1),
  (j.at0 + ${seconds('j.g1 + j.g2')}, ${sql.text('email_verified')}, ${sql.json({})}, j.reach2)
) as e(at, name, props, keep)
where e.keep and e.at < ${ctx.cutoff}`;
}

function otherSelect(ctx: KindContext): string {
  const { sql, spec } = ctx;
  const app = sql.bool(isApp(ctx));
  return `select e.at, e.name, j.user_id, case when e.second then j.device2 else j.device1 end, ${ctx.raw}, j.version, e.props, j.country, j.channel
from (
  select b.*,
    ${riderColumns(ctx)},
    ${sql.localInstant(ctx.day, ctx.tz, sql.timeOfDay('b.j1', 'b.j2', 'b.j3', 'b.j4', COMMUTE_PEAKS))} as at0,
    ${sql.pick('b.j8', MAP_LAYERS)} as layer
  from (
    select a.jkey, a.pid,
    ${personDraws(ctx)},
    ${journeyDraws(ctx, 12)}
    from (select s.jkey, ${personId(ctx)} as pid from (${slots(ctx, 'other')}) s offset 0) a
    offset 0
  ) b
  offset 0
) j
cross join lateral (values
  (j.at0, ${sql.text('app_open')}, ${sql.json({ source: 'launcher' })}, ${app}, false),
  (j.at0 + ${seconds('5 + 55 * j.j5')}, ${sql.text('ticket_scan')},
    jsonb_build_object(${sql.text('line')}, ${sql.text('L')} || (1 + floor(j.j9 * 9))::int), ${app} and j.j6 < ${sql.num(0.8)}, false),
  (j.at0 + ${seconds('(8 + 3 * (j.j10 - 0.5)) * 3600')}, ${sql.text('ticket_scan')},
    jsonb_build_object(${sql.text('line')}, ${sql.text('L')} || (1 + floor(j.j11 * 9))::int), ${app} and j.j6 < ${sql.num(0.8 * 0.35)}, j.device2 is not null and j.j12 < 0.5),
  (j.at0 + ${seconds('20 + 180 * j.j7')}, ${sql.text('map_view')}, jsonb_build_object(${sql.text('layer')}, j.layer),
    not ${app} or j.j7 < ${sql.num(0.3)}, false)
) as e(at, name, props, keep, second)
where e.keep and e.at < ${ctx.cutoff}`;
}
