/**
 * Fills a scenario's events table set-based inside PostgreSQL: one insert per
 * flow, platform and run of days, where `generate_series` makes one row per
 * journey, hashed draws decide who the person is and how far they get, and a
 * lateral VALUES list expands each journey into its events. Injected faults
 * are conditions on those draws (catalogue.ts); faults of the loading
 * pipeline (a day loaded twice, rows that arrive late, a day that stops early)
 * are statements on the finished table.
 *
 * Randomness is `hashint4extended(key, stream)`: a journey's draws depend on
 * (seed, day, flow, platform, journey slot), a person's on (seed, platform,
 * person), never on row order or on how the work is split.
 */
import type pg from 'pg';
import { Params, quoteIdent, quoteQualified, type Query } from '../db/sql.js';
import type { Injection } from './catalogue.js';
import { Rng } from './random.js';
import { dayOf, resultValues, type FlowPlan, type ParamPlan, type PlatformPlan, type ReleasePlan, type Scenario } from './model.js';

/** Draws per journey slot: keys are slot * DRAWS + draw number. */
const DRAWS = 128;
/** Journeys per insert statement, so big scenarios are inserted in pieces. */
const JOURNEYS_PER_STATEMENT = 150_000;
/** A person's population: about this many days of the platform's journeys, so people come back. */
const POPULATION_DAYS = 12;
/** Share of people reaching the step before a result who send a failure result. */
const FAILURE_SHARE = 0.5;

export const LATE_TABLE = 'late_rows';

/** Column names of the events table in insert order: the seven roles, then the dimensions. */
export function tableColumns(scenario: Scenario): string[] {
  const c = scenario.columns;
  return [c.time, c.name, c.user, c.device, c.platform, c.version, c.params, ...scenario.dimensions.map((d) => d.name)];
}

export function createTableQuery(scenario: Scenario, schema: string): Query {
  const c = scenario.columns;
  const types: Record<string, string> = { [c.time]: 'timestamptz not null', [c.name]: 'text not null', [c.params]: 'jsonb' };
  const columns = tableColumns(scenario).map((name) => `${quoteIdent(name)} ${types[name] ?? 'text'}`);
  return { text: `create table ${quoteQualified(`${schema}.${scenario.table}`)} (\n  ${columns.join(',\n  ')}\n)`, values: [] };
}

/** Journeys of each flow and platform on each day: weekday shape, trend, noise, holidays. */
export function journeyCounts(scenario: Scenario): number[][][] {
  const rng = new Rng(scenario.seed, 'days');
  const factors = new Array<number>(scenario.days).fill(1);
  for (const injection of scenario.injections) {
    if (injection.kind === 'volume') for (let d = injection.from; d <= injection.to; d++) factors[d]! *= injection.factor;
  }
  const counts: number[][][] = scenario.flows.map(() => scenario.platforms.map(() => []));
  for (let day = 0; day < scenario.days; day++) {
    const weekday = (new Date(`${dayOf(scenario, day)}T12:00:00Z`).getUTCDay() + 6) % 7;
    const shared = scenario.dayNoise * rng.normal();
    scenario.platforms.forEach((platform, p) => {
      const own = scenario.platformNoise * rng.normal();
      const level =
        scenario.journeysPerDay *
        platform.share *
        scenario.weekday[weekday]! *
        Math.exp(scenario.trendPerDay * day + shared + own - (scenario.dayNoise ** 2 + scenario.platformNoise ** 2) / 2) *
        factors[day]!;
      scenario.flows.forEach((flow, f) => {
        const mean = level * flow.share;
        counts[f]![p]![day] = Math.max(0, Math.round(mean + Math.sqrt(mean) * rng.normal()));
      });
    });
  }
  return counts;
}

/** Assembles one insert statement, collecting parameters and numbering draws. */
class Builder {
  readonly p = new Params();
  private nextDraw = 1;
  constructor(
    readonly scenario: Scenario,
    readonly flow: FlowPlan,
    readonly platform: PlatformPlan,
  ) {}

  num(value: number): string {
    return `${this.p.add(value)}::float8`;
  }
  int(value: number): string {
    return `${this.p.add(value)}::int`;
  }
  text(value: string): string {
    return `${this.p.add(value)}::text`;
  }
  /** A fresh journey draw, uniform in (0, 1). */
  draw(): string {
    const k = this.nextDraw++;
    if (k >= DRAWS) throw new Error(`flow ${this.flow.id} needs more than ${DRAWS} draws per journey`);
    return `((hashint4extended(j.slot * ${DRAWS} + ${k}, j.st) & 2147483647)::float8 + 0.5) / 2147483648.0`;
  }
  /** Standard normal from two fresh draws (Box-Muller). */
  normal(): string {
    return `(sqrt(-2 * ln(${this.draw()})) * cos(2 * pi() * ${this.draw()}))`;
  }
  /** A person's draw `k`, the same on every day and flow. */
  person(k: number): string {
    return `((hashint4extended(j.pid * 16 + ${k}, hashint8extended(${this.int(this.platform.index)}::bigint, ${this.p.add(String(this.scenario.seed * 4 + 1))}::bigint)) & 2147483647)::float8 + 0.5) / 2147483648.0`;
  }
  pick(u: string, values: readonly string[], shares: readonly number[]): string {
    let cumulative = 0;
    const arms = values.slice(0, -1).map((value, i) => {
      cumulative += shares[i]!;
      return `when ${u} < ${this.num(cumulative)} then ${this.text(value)}`;
    });
    return `case ${arms.join(' ')} else ${this.text(values[values.length - 1]!)} end`;
  }
  days(column: string, from: number, to: number): string {
    return `${column} between ${this.int(from)} and ${this.int(to)}`;
  }
}

function adoptionSql(b: Builder, release: ReleasePlan): string {
  const midpoint = Math.log(1 / 0.04 - 1) / release.rate;
  return `case when j.di >= ${b.int(release.firstDay)} then ${b.num(release.ceiling)} / (1 + exp(-${b.num(release.rate)} * (j.di - ${b.int(release.firstDay)} - ${b.num(midpoint)}))) else 0 end`;
}

/** Newest release whose adoption covers the person's eagerness, else one of the base versions. */
function versionSql(b: Builder, eager: string, patch: string): string {
  const platform = b.platform;
  const base = `(${b.p.add(platform.baseVersions)}::text[])[1 + floor(${patch} * ${platform.baseVersions.length})::int]`;
  const arms = [...platform.releases].reverse().map((r) => `when ${eager} < ${adoptionSql(b, r)} then ${b.text(r.version)}`);
  return arms.length > 0 ? `case ${arms.join(' ')} else ${base} end` : base;
}

function paramValue(b: Builder, param: ParamPlan): string {
  const u = b.draw();
  switch (param.type) {
    case 'integer':
      return `to_jsonb((${b.num(param.min!)} + floor(${u} * ${b.num(param.max! - param.min! + 1)}))::int)`;
    case 'number':
      return `to_jsonb(round((${b.num(param.min!)} + ${u} * ${b.num(param.max! - param.min!)})::numeric, 1))`;
    case 'boolean':
      return `to_jsonb(${u} < 0.3)`;
    case 'string':
      return `to_jsonb(${b.pick(u, param.values!, param.shares!)})`;
  }
}

const platformIs = (b: Builder, injection: { platform: number }) => injection.platform === b.platform.index;

/** The props object of one row of `event`, with the faults that touch its keys and values. */
function propsSql(b: Builder, event: string, where: string | null): string {
  const plan = b.scenario.events[event];
  const pairs: string[] = [];
  if (plan?.whereKey && where !== null) pairs.push(`${b.text(plan.whereKey)}, ${where}`);
  for (const param of plan?.params ?? []) {
    let key = b.text(param.key);
    let value = paramValue(b, param);
    for (const injection of b.scenario.injections) {
      if (!('event' in injection) || injection.event !== event || !('key' in injection) || injection.key !== param.key) continue;
      if (!platformIs(b, injection)) continue;
      if (injection.kind === 'rename_param') key = `case when j.version = any(${b.p.add(injection.versions)}::text[]) then ${b.text(injection.to)} else ${key} end`;
      if (injection.kind === 'param_as_text') value = `case when ${b.days('j.di', injection.from, injection.to)} then to_jsonb((${value})#>>'{}') else ${value} end`;
      if (injection.kind === 'new_value') {
        value = `case when j.version = any(${b.p.add(injection.versions)}::text[]) and ${b.draw()} < ${b.num(injection.share)} then to_jsonb(${b.text(injection.value)}) else ${value} end`;
      }
    }
    pairs.push(`${key}, ${value}`);
  }
  return `jsonb_build_object(${pairs.join(', ')})`;
}

/** Conditions under which a row of `event` (with `where`) is not sent. */
function droppedSql(b: Builder, event: string, where: string | null): string[] {
  const out: string[] = [];
  for (const injection of b.scenario.injections) {
    if (injection.kind === 'drop_step' && platformIs(b, injection) && injection.event === event && injection.where === where) {
      out.push(`(j.version = ${b.text(injection.version)} and ${b.draw()} < ${b.num(injection.fraction)})`);
    }
    if (injection.kind === 'event_missing' && platformIs(b, injection) && injection.event === event) out.push(`(${b.days('j.di', injection.from, injection.to)})`);
  }
  return out;
}

/** Days on which `event` is sent twice on this platform. */
function twiceSql(b: Builder, event: string): string | undefined {
  const arms = b.scenario.injections
    .filter((i): i is Extract<Injection, { kind: 'event_twice' }> => i.kind === 'event_twice' && platformIs(b, i) && i.event === event)
    .map((i) => `(${b.days('j.di', i.from, i.to)})`);
  return arms.length > 0 ? arms.join(' or ') : undefined;
}

interface Row {
  at: string;
  event: string;
  props: string;
  keep: string;
}

/** One insert: the journeys of `flow` on `platform` over the day indices given as parameters. */
export function journeysQuery(scenario: Scenario, schema: string, flowIndex: number, platformIndex: number, days: Array<{ day: string; index: number; journeys: number }>): Query {
  const flow = scenario.flows[flowIndex]!;
  const platform = scenario.platforms[platformIndex]!;
  const b = new Builder(scenario, flow, platform);
  const tz = b.text(scenario.timezone);
  const journeysOnPlatform = scenario.flows.reduce((sum, f) => sum + scenario.journeysPerDay * f.share * platform.share, 0);
  const population = Math.max(50, Math.round(journeysOnPlatform * POPULATION_DAYS));
  const stream = `hashint8extended((d.di * 64 + ${b.int(flowIndex * 8 + platform.index)})::bigint, ${b.p.add(String(scenario.seed * 4))}::bigint)`;

  // Person: identity, spelling of the platform, version, dimension values.
  const anon = b.person(1);
  const personCols = [
    `case when ${anon} < ${b.num(platform.anonymousShare)} then null else ${b.text(`u${platform.index}_`)} || lpad(to_hex(hashint4extended(j.pid, ${b.p.add(String(scenario.seed))}::bigint)), 8, '0') || to_hex(j.pid) end as user_id`,
    `${b.text(`${platform.index}`)} || lpad(to_hex(hashint4extended(j.pid, ${b.p.add(String(scenario.seed + 7))}::bigint)), 8, '0') || lpad(to_hex(j.pid), 6, '0') as device_id`,
    `${platform.raw.length === 1 ? b.text(platform.raw[0]!.value) : b.pick(b.person(2), platform.raw.map((r) => r.value), platform.raw.map((r) => r.share))} as raw_platform`,
    `${platform.baseVersions.length === 0 ? 'null::text' : versionSql(b, b.person(3), b.person(4))} as version`,
    ...scenario.dimensions.map((d, i) => `${b.pick(b.person(5 + i), d.values, d.shares)} as dim${i}`),
  ];

  // When the journey starts: daily peaks plus a spread over 06:00-23:00, local time.
  const mix = b.draw();
  const z = b.normal();
  const rest = b.draw();
  let cumulative = 0;
  const peakArms = scenario.peaks.map(([share, hour, spread]) => {
    cumulative += share;
    return `when ${mix} < ${b.num(cumulative)} then (${b.num(hour)} + ${b.num(spread)} * ${z})`;
  });
  const seconds = `mod(((case ${peakArms.join(' ')} else 6 + 17 * ${rest} end) * 3600 + 172800)::numeric, 86400)::float8`;
  const start = `((j.day + ${seconds} * interval '1 second') at time zone ${tz})`;

  // Whether the journey is seen at all (people lost on a platform, a segment's drop).
  const hidden: string[] = [];
  for (const injection of scenario.injections) {
    if (injection.kind === 'people_lost' && platformIs(b, injection)) hidden.push(`(j.di >= ${b.int(injection.from)} and ${b.draw()} < ${b.num(injection.share)})`);
    if (injection.kind === 'segment_drop') {
      const dim = scenario.dimensions.findIndex((d) => d.name === injection.dimension);
      hidden.push(`(j.dim${dim} = ${b.text(injection.value)} and ${b.days('j.di', injection.from, injection.to)} and ${b.draw()} < ${b.num(injection.drop)})`);
    }
  }

  // How far the journey gets, and when each step happens.
  const steps = flow.steps;
  const continues: string[] = [];
  const times: string[] = ['j.at0'];
  for (let s = 1; s < steps.length; s++) {
    const step = steps[s]!;
    let chance = `${b.num(Math.min(1, step.continuation * platform.conversion))}`;
    let slower = '1';
    for (const injection of scenario.injections) {
      if (injection.kind === 'continuation' && injection.flow === flow.id && injection.step === s) {
        chance = `${chance} * case when ${b.days('j.di', injection.from, injection.to)} then ${b.num(injection.factor)} else 1 end`;
      }
      if (injection.kind === 'step_time' && injection.flow === flow.id && injection.step === s && (injection.platform === null || injection.platform === platform.index)) {
        const version = injection.version === null ? 'true' : `j.version = ${b.text(injection.version)}`;
        slower = `${slower} * case when ${version} and ${b.days('j.di', injection.from, injection.to)} then ${b.num(injection.factor)} else 1 end`;
      }
    }
    continues.push(`${b.draw()} < ${chance} as c${s}`);
    times.push(`j.t${s - 1} + (${b.num(step.gapMedian)} * ${slower} * exp(${b.num(step.gapSigma)} * ${b.normal()})) * interval '1 second'`);
  }

  const rows: Row[] = [];
  const whereValue = (value: string) => `to_jsonb(${b.text(value)})`;
  const isResult = flow.failureValue !== null;
  steps.forEach((step, s) => {
    const lastStep = s === steps.length - 1;
    let keep = `j.reach${s}`;
    let where: string | null;
    if (lastStep && isResult) {
      const [success, failure] = resultValues(flow);
      keep = `(j.reach${s} or (j.reach${s - 1} and ${b.draw()} < ${b.num(FAILURE_SHARE)}))`;
      where = `case when j.reach${s} then ${whereValue(success!)} else ${whereValue(failure!)} end`;
    } else where = step.where === null ? null : whereValue(step.where);
    const dropped = droppedSql(b, step.event, step.where);
    const props = propsSql(b, step.event, where);
    rows.push({ at: `j.t${s}`, event: step.event, props, keep: [keep, ...dropped.map((d) => `not ${d}`)].join(' and ') });
    const twice = twiceSql(b, step.event);
    if (twice) rows.push({ at: `j.t${s} + (0.005 + 0.5 * ${b.draw()}) * interval '1 second'`, event: step.event, props, keep: `${rows[rows.length - 1]!.keep} and (${twice})` });
  });
  if (flow.watch) {
    const watch = flow.watch;
    const at = `j.t${watch.afterStep} + (2 + 25 * ${b.draw()}) * interval '1 second'`;
    const dropped = droppedSql(b, watch.event, null);
    const props = propsSql(b, watch.event, null);
    const keep = [`j.reach${watch.afterStep}`, `${b.draw()} < ${b.num(watch.share)}`, ...dropped.map((d) => `not ${d}`)].join(' and ');
    rows.push({ at, event: watch.event, props, keep });
    const twice = twiceSql(b, watch.event);
    if (twice) rows.push({ at: `${at} + 0.01 * interval '1 second'`, event: watch.event, props, keep: `${keep} and (${twice})` });
  }

  // Each stage ends in `offset 0` so PostgreSQL computes its columns once instead of inlining them into every use.
  const stage = (name: string, body: string) => `${name} as (\n${body}\n  offset 0\n)`;
  const dims = scenario.dimensions.map((_, i) => `, j.dim${i}`).join('');
  const text = `with ${[
    stage('d', `  select * from unnest(${b.p.add(days.map((d) => d.day))}::date[], ${b.p.add(days.map((d) => d.index))}::int[], ${b.p.add(days.map((d) => d.journeys))}::int[]) as d(day, di, n)`),
    stage('slots', `  select d.day, d.di, g.slot, ${stream} as st from d cross join lateral generate_series(1, d.n) g(slot)`),
    stage('people', `  select j.*, floor(${b.draw()} * ${b.int(population)})::int as pid from slots j`),
    stage('persons', `  select j.*, ${personCols.join(',\n    ')} from people j`),
    stage('starts', `  select j.*, ${start} as at0 from persons j${hidden.length > 0 ? `\n  where not (${hidden.join(' or ')})` : ''}`),
    stage('continued', `  select j.*${continues.map((c) => `, ${c}`).join('')} from starts j`),
    stage('reached', `  select j.*, ${steps.map((_, s) => `${['true', ...continues.slice(0, s).map((_, i) => `j.c${i + 1}`)].join(' and ')} as reach${s}`).join(', ')} from continued j`),
    ...times.slice(1).map((t, i) => stage(`timed${i + 1}`, `  select j.*, ${t} as t${i + 1} from ${i === 0 ? 'reached' : `timed${i}`} j`)),
  ].join(',\n')}
insert into ${quoteQualified(`${schema}.${scenario.table}`)} (${tableColumns(scenario).map(quoteIdent).join(', ')})
select e.at, e.name, j.user_id, j.device_id, j.raw_platform, j.version, e.props${dims}
from ${times.length > 1 ? `timed${times.length - 1}` : 'reached'} j
cross join lateral (values
  ${rows.map((r) => `(${r.at}, ${b.text(r.event)}, ${r.props}, ${r.keep})`).join(',\n  ')}
) as e(at, name, props, keep)
where e.keep`;
  return { text: text.replace(/\bj\.t0\b/g, 'j.at0'), values: b.p.values };
}

/** The statements that fill the table, each a run of days small enough to keep one statement's memory modest. */
export function fillQueries(scenario: Scenario, schema: string): Query[] {
  const counts = journeyCounts(scenario);
  const queries: Query[] = [];
  scenario.flows.forEach((_, f) => {
    scenario.platforms.forEach((_, p) => {
      let run: Array<{ day: string; index: number; journeys: number }> = [];
      let total = 0;
      for (let day = 0; day < scenario.days; day++) {
        const journeys = counts[f]![p]![day]!;
        run.push({ day: dayOf(scenario, day), index: day, journeys });
        total += journeys;
        if (total >= JOURNEYS_PER_STATEMENT || day === scenario.days - 1) {
          queries.push(journeysQuery(scenario, schema, f, p, run));
          run = [];
          total = 0;
        }
      }
    });
  });
  return queries;
}

/** Bounds of local day `index` as SQL over parameters. */
function dayRange(p: Params, scenario: Scenario, index: number, hour = 0): { lo: string; hi: string } {
  const tz = `${p.add(scenario.timezone)}::text`;
  const day = `${p.add(dayOf(scenario, index))}::date`;
  return { lo: `((${day} + ${p.add(hour)}::int * interval '1 hour') at time zone ${tz})`, hi: `((${day} + 1)::timestamp at time zone ${tz})` };
}

/** Faults of the loading pipeline, applied to the finished table: a day loaded twice, late rows held back, the newest day cut short. */
export function pipelineFaultQueries(scenario: Scenario, schema: string): Query[] {
  const table = quoteQualified(`${schema}.${scenario.table}`);
  const late = quoteQualified(`${schema}.${LATE_TABLE}`);
  const time = quoteIdent(scenario.columns.time);
  const out: Query[] = [{ text: `create table ${late} (like ${table})`, values: [] }, { text: `alter table ${late} add column arrives int not null`, values: [] }];
  for (const injection of scenario.injections) {
    const p = new Params();
    if (injection.kind === 'double_load') {
      const { lo, hi } = dayRange(p, scenario, injection.day);
      out.push({ text: `insert into ${table} select * from ${table} where ${time} >= ${lo} and ${time} < ${hi}`, values: p.values });
    }
    if (injection.kind === 'late_rows') {
      const { lo, hi } = dayRange(p, scenario, injection.day);
      const platform = scenario.platforms.find((pl) => pl.index === injection.platform)!;
      const cols = tableColumns(scenario).map(quoteIdent).join(', ');
      out.push({
        text: `with moved as (
  delete from ${table}
  where ${time} >= ${lo} and ${time} < ${hi} and ${quoteIdent(scenario.columns.platform)} = any(${p.add(platform.raw.map((r) => r.value))}::text[])
    and (hashtext(${quoteIdent(scenario.columns.device)} || 'late') & 1023) < ${p.add(Math.round(injection.share * 1024))}::int
  returning ${cols}
)
insert into ${late} (${cols}, arrives) select ${cols}, ${p.add(injection.arrives)}::int from moved`,
        values: p.values,
      });
    }
    if (injection.kind === 'early_stop') {
      const { lo, hi } = dayRange(p, scenario, injection.day, injection.hour);
      out.push({ text: `delete from ${table} where ${time} >= ${lo} and ${time} < ${hi}`, values: p.values });
    }
  }
  return out;
}

/** Moves the late rows that have arrived by day index `day` into the events table. */
export function arriveQuery(scenario: Scenario, schema: string, day: number): Query {
  const cols = tableColumns(scenario).map(quoteIdent).join(', ');
  return {
    text: `with arrived as (delete from ${quoteQualified(`${schema}.${LATE_TABLE}`)} where arrives <= $1 returning ${cols})
insert into ${quoteQualified(`${schema}.${scenario.table}`)} (${cols}) select ${cols} from arrived`,
    values: [day],
  };
}

/** Creates and fills the events table, then the index every plumbline query needs; returns the number of rows. */
export async function generateEvents(pool: pg.Pool, scenario: Scenario, schema: string, concurrency = 1): Promise<number> {
  await pool.query(createTableQuery(scenario, schema));
  const queue = fillQueries(scenario, schema);
  let rows = 0;
  const worker = async () => {
    for (let q = queue.shift(); q; q = queue.shift()) {
      const inserted = (await pool.query(q)).rowCount ?? 0;
      rows += inserted;
    }
  };
  await Promise.all(Array.from({ length: concurrency }, worker));
  const table = quoteQualified(`${schema}.${scenario.table}`);
  await pool.query(`create index ${quoteIdent(`${scenario.table}_time_idx`)} on ${table} (${quoteIdent(scenario.columns.time)})`);
  for (const query of pipelineFaultQueries(scenario, schema)) await pool.query(query);
  await pool.query(`analyze ${table}`);
  return rows;
}
