/**
 * faults_hostile_rows: kinds of bad rows, each mixed into a good day of the
 * demo scenario (PostgreSQL warehouse). For every kind the day must roll up,
 * the rollup (every rollup table and the day's events, hours and newest
 * event) must equal the rollup of the good rows plus the row in the form the
 * rules give it (nothing for a set-aside row, the cut or cleared row for a
 * repaired one), and the row must be counted once under its reason in the
 * day's status. The rules are in service/warehouse/mapping.ts (BAD_ROW_REASONS);
 * the same rules on ClickHouse are checked by test/rollup/bad-rows.test.ts.
 */
import pg from 'pg';
import { toFlowDefinition, toWarehouseMapping } from '../../service/config/definitions.js';
import { loadConfig } from '../../service/config/load.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { DEMO_TIMEZONE, generateScenario } from '../../service/demo/scenario.js';
import { rollupDay } from '../../service/rollup/rollup-day.js';
import { CUT_MARKER, TEXT_KEY_MAX_LENGTH, type BadRowReason } from '../../service/warehouse/mapping.js';
import { PostgresWarehouse } from '../../service/warehouse/postgres/index.js';
import type { FaultEnv, FaultFigure, FaultSection } from './section.js';

const DAY = '2026-11-02';

interface Row {
  at: Date;
  name: string;
  user: string | null;
  device: string | null;
  platform: string;
  version: string | null;
  /** Raw JSON text (numbers beyond double precision cannot go through JSON.stringify). */
  props: string | null;
  country: string | null;
  channel: string | null;
}

interface Kind {
  name: string;
  reason: BadRowReason;
  bad: Row;
  /** The row as the rules read it; null when it is set aside. */
  repaired: Row | null;
}

const base: Row = {
  at: new Date('2026-11-02T17:00:00Z'),
  name: 'screen_shown',
  user: 'hostile-user',
  device: 'hostile-device',
  platform: 'Android',
  version: '7.1.0',
  props: JSON.stringify({ view: 'zone_picker' }),
  country: 'US',
  channel: 'direct',
};

/** What the rules make of a long text key: TEXT_KEY_MAX_LENGTH code points, the last one the marker. */
const cut = (text: string) => {
  const points = Array.from(text);
  return points.length > TEXT_KEY_MAX_LENGTH ? `${points.slice(0, TEXT_KEY_MAX_LENGTH - 1).join('')}${CUT_MARKER}` : text;
};

export function hostileKinds(): Kind[] {
  const kinds: Kind[] = [];
  const add = (name: string, reason: BadRowReason, change: Partial<Row>, repaired: Partial<Row> | null) =>
    kinds.push({ name, reason, bad: { ...base, ...change }, repaired: repaired === null ? null : { ...base, ...change, ...repaired } });
  for (const [label, name] of [['empty', ''], ['spaces', '   '], ['tab', '\t'], ['line break', '\n'], ['CR LF', '\r\n'], ['mixed blanks', ' \t \r\n ']] as const) {
    add(`event name: ${label}`, 'no_event_name', { name }, null);
  }
  add('version * on a watched event', 'reserved_version', { version: '*' }, { version: null });
  add('version * on an unwatched event', 'reserved_version', { version: '*', name: 'app_open', props: null }, { version: null });
  add('version * on a purchase', 'reserved_version', { version: '*', name: 'pass_purchase_result', props: JSON.stringify({ outcome: 'approved' }) }, { version: null });
  add('version * on web', 'reserved_version', { version: '*', platform: 'web' }, { version: null });
  add('version * on iOS', 'reserved_version', { version: '*', platform: 'iOS' }, { version: null });
  const long = (label: string, text: string) => [label, text] as const;
  for (const [label, text] of [long('3,000 x', 'x'.repeat(3000)), long('3,000 é', 'é'.repeat(3000)), long('1,000 emoji', '🚆'.repeat(1000)), long('129 characters', 'n'.repeat(129))]) {
    add(`event name of ${label}`, 'long_text', { name: text }, { name: cut(text) });
  }
  add('watched name plus 3,000 characters', 'long_text', { name: `screen_shown${'s'.repeat(3000)}` }, { name: cut(`screen_shown${'s'.repeat(3000)}`) });
  for (const [label, text] of [long('3,000 x', 'v'.repeat(3000)), long('3,000 é', 'é'.repeat(3000))]) {
    add(`version of ${label}`, 'long_text', { version: text }, { version: cut(text) });
  }
  for (const [label, text] of [long('3,000 x', 'c'.repeat(3000)), long('129 characters', 'c'.repeat(129)), long('1,000 emoji', '🌍'.repeat(1000))]) {
    add(`country of ${label}`, 'long_text', { country: text }, { country: cut(text) });
  }
  add('channel of 3,000 ü', 'long_text', { channel: 'ü'.repeat(3000) }, { channel: cut('ü'.repeat(3000)) });
  for (const [label, key] of [long('3,000 k', 'k'.repeat(3000)), long('500 é', 'é'.repeat(500)), long('1,000 emoji', '🔑'.repeat(1000))]) {
    add(`parameter key of ${label}`, 'long_text', { props: JSON.stringify({ view: 'zone_picker', [key]: 1 }) }, { props: JSON.stringify({ view: 'zone_picker', [cut(key)]: 1 }) });
  }
  add('long version and long key together', 'long_text', { version: 'w'.repeat(3000), props: JSON.stringify({ ['q'.repeat(3000)]: true }) }, { version: cut('w'.repeat(3000)), props: JSON.stringify({ [cut('q'.repeat(3000))]: true }) });
  for (const [label, text] of [
    ['1e400', '{"view": "zone_picker", "amount": 1e400}'],
    ['-1e400', '{"view": "zone_picker", "amount": -1e400}'],
    ['1E400', '{"amount": 1E400}'],
    ['2e308', '{"view": "intro", "amount": 2e308}'],
    ['nested 1e999', '{"view": "zone_picker", "cart": {"total": 1e999}}'],
    ['in an array', '{"view": "zone_picker", "list": [1, 1e400]}'],
    ['-0.5e99999', '{"amount": -0.5e99999}'],
  ] as const) {
    add(`number ${label}`, 'unreadable_params', { props: text }, { props: null });
  }
  return kinds;
}

async function run(env: FaultEnv): Promise<FaultFigure[]> {
  const url = await env.database();
  const pool = new pg.Pool({ connectionString: url, max: 6 });
  const schema = `faults_rows_${Math.random().toString(16).slice(2, 10)}`;
  const stateSchema = `${schema}_state`;
  const s = quoteIdent(schema);
  const st = quoteIdent(stateSchema);
  try {
    await generateScenario(pool, { schema, table: 'events', from: DAY, to: DAY, scale: 0.3 });
    await pool.query(`create table ${s}.good as select * from ${s}.events`);
    await migrate(pool, stateSchema);
    const config = loadConfig('config', { env: {} });
    config.main.warehouse.events_table = `${schema}.events`;
    const mapping = toWarehouseMapping(config.main);
    const warehouse = new PostgresWarehouse(pool, mapping, { workMem: '64MB', statementTimeoutSeconds: 600 });
    const ctx = { warehouse, state: pool, stateSchema, timezone: DEMO_TIMEZONE, flows: config.flows.map((flow) => toFlowDefinition(flow.config)) };

    const load = async (rows: Row[]) => {
      await pool.query(`truncate ${s}.events`);
      await pool.query(`insert into ${s}.events select * from ${s}.good`);
      await pool.query({
        text: `insert into ${s}.events select * from unnest($1::timestamptz[], $2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::jsonb[], $8::text[], $9::text[])`,
        values: (['at', 'name', 'user', 'device', 'platform', 'version', 'props', 'country', 'channel'] as const).map((key) => rows.map((row) => row[key])),
      });
    };
    /** Every rollup table of the day, and the day's status without its bookkeeping. */
    const snapshot = async () => {
      const tables = ['event_days', 'param_days', 'funnel_days', 'step_days'];
      const parts = await Promise.all(tables.map((table) => pool.query(`select t::text as row from ${st}.${table} t where day = '${DAY}' order by t::text collate "C"`)));
      const status = await pool.query(`select platform, events, newest_at, hourly from ${st}.day_status where day = '${DAY}' order by platform`);
      return JSON.stringify([...parts.map((part) => part.rows), status.rows]);
    };
    const badRows = async () => {
      const { rows } = await pool.query<{ bad_rows: Record<string, number> }>(`select bad_rows from ${st}.day_status where day = '${DAY}'`);
      const total: Record<string, number> = {};
      for (const row of rows) for (const [reason, count] of Object.entries(row.bad_rows)) total[reason] = (total[reason] ?? 0) + count;
      return total;
    };

    const kinds = hostileKinds();
    let passed = 0;
    let rolledUp = 0;
    let counted = 0;
    const started = performance.now();
    for (const kind of kinds) {
      try {
        await load(kind.repaired ? [kind.repaired] : []);
        await rollupDay(ctx, DAY);
        const expected = await snapshot();
        await load([kind.bad]);
        await rollupDay(ctx, DAY);
        rolledUp += 1;
        const equal = (await snapshot()) === expected;
        const reasons = await badRows();
        const countedRight = JSON.stringify(reasons) === JSON.stringify({ [kind.reason]: 1 });
        if (countedRight) counted += 1;
        if (equal && countedRight) passed += 1;
        else env.log(`faults_hostile_rows: ${kind.name}: ${equal ? '' : 'rollup differs from the expected one; '}${countedRight ? '' : `counted ${JSON.stringify(reasons)}`}`);
      } catch (error) {
        env.log(`faults_hostile_rows: ${kind.name}: the day failed: ${(error as Error).message.slice(0, 200)}`);
      }
    }
    const seconds = (performance.now() - started) / 1000;
    const { rows } = await pool.query<{ n: string }>(`select count(*) as n from ${s}.good`);
    return [
      { name: 'faults_hostile_rows_kinds', value: kinds.length, target: '>= 30', met: kinds.length >= 30 },
      { name: 'faults_hostile_rows_passed', value: `${passed}/${kinds.length}`, target: 'all', met: passed === kinds.length },
      { name: 'faults_hostile_rows_days_rolled_up', value: `${rolledUp}/${kinds.length}` },
      { name: 'faults_hostile_rows_counted_by_reason', value: `${counted}/${kinds.length}` },
      { name: 'faults_hostile_rows_good_rows', value: Number(rows[0]!.n) },
      { name: 'faults_hostile_rows_seconds', value: Math.round(seconds) },
    ];
  } finally {
    await pool.query(`drop schema if exists ${s} cascade`);
    await pool.query(`drop schema if exists ${st} cascade`);
    await pool.end();
  }
}

export const hostileRowsFaults: FaultSection = { name: 'hostile_rows', run };
