/**
 * Benchmark of the daily rollup (`rollupDay`) against the minimal grouped pass
 * over the same day, on the demo scenario's weekday 2026-10-14 at about 1M
 * events (see rollup-data.ts), in the same run:
 *
 * - `rollup_vs_group_ratio`: wall time of the whole rollup of the day (every
 *   warehouse statement, the untracked-keys lookup and the state write) over
 *   `select count(*) from (select distinct event, platform, version, person
 *   ...)` for the day, on the table with 30 days of history. Target: 1.5.
 * - `history_growth_ratio`: the rollup on the table with 365 days of history
 *   over the same on 30 days. Target: 1.2.
 * - `rollup_clickhouse_vs_postgres`: the PostgreSQL rollup of the day over
 *   the same rollup with the ClickHouse engine in-process (chdb), on a copy
 *   of the same table (30 days) made with ClickHouse's postgresql() table
 *   function, state in PostgreSQL on both sides. Target: 10. The in-process
 *   engine's CPU time is printed beside it (`rollup_clickhouse_cpu_ms`): on a
 *   shared machine it says what the rollup costs whatever the others run.
 * - `rollup_clickhouse_10m_s` (clickhouse-10m.ts): the ClickHouse rollup of
 *   a 10M-event day, in a child process whose peak memory is reported.
 *   Target: under 10 s.
 *
 * The PostgreSQL sides run through the same reader (`PostgresWarehouse.read`),
 * so with the same session settings: `work_mem` from config/plumbline.yaml,
 * JIT off, the server's own parallel-query settings. After a warm-up round, rounds repeat
 * with the order of the measurements rotated, and each figure is the median.
 * The rollup's warehouse statements run side by side on separate connections
 * (as in production, using both cores); the same statements are also timed
 * one at a time, and their sum is reported beside the side-by-side wall time.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { toFlowDefinition, toWarehouseMapping, toWarehouseSettings } from '../service/config/definitions.js';
import { loadConfig } from '../service/config/load.js';
import { migrate } from '../service/db/migrate.js';
import { quoteIdent, quoteQualified, type Query } from '../service/db/sql.js';
import { copyEventsFromPostgres } from '../service/demo/clickhouse.js';
import { readUntrackedKeys, rollupDay, watchedEvents, type RollupContext } from '../service/rollup/rollup-day.js';
import { ClickHouseWarehouse } from '../service/warehouse/clickhouse/index.js';
import { openEmbedded } from '../service/warehouse/clickhouse/embedded.js';
import type { Warehouse } from '../service/warehouse/engine.js';
import type { WarehouseMapping } from '../service/warehouse/mapping.js';
import { openPostgresWarehouse } from '../service/warehouse/open.js';
import type { PostgresWarehouse } from '../service/warehouse/postgres/index.js';
import { benchClickHouse10m } from './clickhouse-10m.js';
import { BENCH_DAY, DAY_SCALE, HISTORY_DAYS, HISTORY_SCALE, dropBenchTables, prepareBenchTables, type HistoryKey } from './rollup-data.js';

export type Figures = Record<string, number | string>;

export interface RollupBenchOptions {
  url: string;
  rounds: number;
  /** Keep the generated tables for a later `reuse` run. */
  keep: boolean;
  reuse: boolean;
  log: (line: string) => void;
}

const STATE_SCHEMA = 'bench_rollup_state';
/** Serialises bench runs on one server: they share the bench schemas. */
const LOCK_KEY = 'plumbline.bench.rollup';

/** The minimal grouped pass: one distinct grouping of the day at the (event, platform, version, person) grain, raw columns. */
export function groupPassQuery(mapping: WarehouseMapping, lo: Date, hi: Date): Query {
  const col = (role: keyof WarehouseMapping['columns']) => quoteIdent(mapping.columns[role]);
  return {
    text: `select count(*) from (
  select distinct ${col('name')}, ${col('platform')}, ${col('version')}, coalesce(${col('user')}, ${col('device')})
  from ${quoteQualified(mapping.table)}
  where ${col('time')} >= $1 and ${col('time')} < $2
) s`,
    values: [lo, hi],
  };
}

export async function benchRollup(options: RollupBenchOptions): Promise<Figures> {
  const pool = new pg.Pool({ connectionString: options.url, max: 10, application_name: 'plumbline-bench' });
  const lock = await pool.connect();
  try {
    const { rows: locked } = await lock.query<{ ok: boolean }>({ text: 'select pg_try_advisory_lock(hashtext($1)) as ok', values: [LOCK_KEY] });
    if (!locked[0]?.ok) throw new Error('another plumbline bench is running against this server');
    return await measure(pool, options);
  } finally {
    if (!options.keep) {
      await dropBenchTables(pool);
      await pool.query(`drop schema if exists ${quoteIdent(STATE_SCHEMA)} cascade`);
    }
    lock.release();
    await pool.end();
  }
}

async function measure(pool: pg.Pool, options: RollupBenchOptions): Promise<Figures> {
  const data = await prepareBenchTables(pool, { reuse: options.reuse, log: options.log });
  await pool.query(`drop schema if exists ${quoteIdent(STATE_SCHEMA)} cascade`);
  await migrate(pool, STATE_SCHEMA);

  const config = loadConfig('config', { env: {} });
  const flows = config.flows.map((flow) => toFlowDefinition(flow.config));
  const settings = toWarehouseSettings(config.main);
  const mapping = (table: string): WarehouseMapping => ({ ...toWarehouseMapping(config.main), table });
  // The pools stay the bench's own: the warehouses are not closed.
  const postgres = { h30: openPostgresWarehouse(pool, mapping(data.tables.h30), settings), h365: openPostgresWarehouse(pool, mapping(data.tables.h365), settings) };
  const context = (warehouse: Warehouse): RollupContext => ({ warehouse, state: pool, stateSchema: STATE_SCHEMA, timezone: config.main.timezone, flows });

  const chdbDir = await mkdtemp(join(tmpdir(), 'plumbline-bench-chdb-'));
  const connection = await openEmbedded({ dataDir: chdbDir, timeoutSeconds: settings.statementTimeoutSeconds });
  try {
    const t0 = performance.now();
    const copied = await copyEventsFromPostgres(connection, { url: options.url, table: data.tables.h30 }, CLICKHOUSE_TABLE);
    options.log(`rollup: copied ${copied} rows of ${data.tables.h30} into ClickHouse (chdb) in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
    const clickhouse = new ClickHouseWarehouse(connection, mapping(CLICKHOUSE_TABLE));
    const figures = await measureRounds(pool, postgres, clickhouse, context, options);
    Object.assign(figures, {
      day_events: data.dayEvents,
      table_rows_30_days: data.rows.h30,
      table_rows_365_days: data.rows.h365,
      data: `demo scenario ${BENCH_DAY} at scale ${DAY_SCALE}; history ${HISTORY_DAYS.h30} or ${HISTORY_DAYS.h365} days at scale ${HISTORY_SCALE}${data.reused ? ' (reused)' : `, built in ${(data.buildMillis / 1000).toFixed(0)} s`}`,
    });
    // The in-process engine holds one data directory per process: the 10M-event day runs in a child process of its own.
    await connection.close();
    return { ...figures, ...(await benchClickHouse10m({ url: options.url, stateSchema: STATE_SCHEMA, dayTable: data.tables.h30, log: options.log })) };
  } finally {
    await connection.close();
    await rm(chdbDir, { recursive: true, force: true });
  }
}

/** The ClickHouse copy of the 30-day table, inside chdb. */
const CLICKHOUSE_TABLE = 'bench.events';

async function measureRounds(
  pool: pg.Pool,
  postgres: Record<HistoryKey, PostgresWarehouse>,
  clickhouse: ClickHouseWarehouse,
  context: (warehouse: Warehouse) => RollupContext,
  options: RollupBenchOptions,
): Promise<Figures> {
  const range = await postgres.h30.dayBounds(BENCH_DAY, context(clickhouse).timezone);
  const several = await peopleWithSeveralVersions(pool, postgres.h30.mapping, range.lo, range.hi);
  const samples = new Map<string, number[]>();
  const record = (name: string, millis: number): void => {
    samples.set(name, [...(samples.get(name) ?? []), millis]);
  };
  const timed = async (work: () => Promise<unknown>) => {
    const t0 = performance.now();
    await work();
    return performance.now() - t0;
  };
  const groupPass = (key: HistoryKey) => timed(() => postgres[key].read(groupPassQuery(postgres[key].mapping, range.lo, range.hi)));
  const rollup = async (warehouse: Warehouse) => {
    const t0 = performance.now();
    const result = await rollupDay(context(warehouse), BENCH_DAY);
    return { wall: performance.now() - t0, statements: result.statements };
  };
  // The rollup's warehouse statements one after another, each alone on the server.
  const oneByOne = async () => {
    const ctx = context(postgres.h30);
    const untracked = await readUntrackedKeys(ctx, BENCH_DAY);
    const times: Record<string, number> = {
      counts: await timed(() => postgres.h30.eventCounts(range, watchedEvents(ctx.flows))),
      status: await timed(() => postgres.h30.hourCounts(range, watchedEvents(ctx.flows))),
      params: await timed(() => postgres.h30.paramProfiles(range, watchedEvents(ctx.flows), untracked)),
    };
    for (const flow of ctx.flows) times[`flow ${flow.id}`] = await timed(() => postgres.h30.flow(flow, range));
    return times;
  };

  const tasks: Array<{ label: string; run: () => Promise<void> }> = [
    { label: 'group pass, 30 days', run: async () => record('group_30', await groupPass('h30')) },
    { label: 'group pass, 365 days', run: async () => record('group_365', await groupPass('h365')) },
    {
      label: 'rollup, 30 days',
      run: async () => {
        const { wall, statements } = await rollup(postgres.h30);
        record('rollup_30', wall);
        record('concurrent_sum_30', statements.reduce((sum, s) => sum + s.millis, 0));
        record('concurrent_longest_30', Math.max(...statements.map((s) => s.millis)));
      },
    },
    { label: 'rollup, 365 days', run: async () => record('rollup_365', (await rollup(postgres.h365)).wall) },
    {
      label: 'rollup on ClickHouse (chdb), 30 days',
      run: async () => {
        // The engine runs in this process: its CPU time is this process's, whatever else the machine is doing.
        const cpu = process.cpuUsage();
        record('rollup_clickhouse', (await rollup(clickhouse)).wall);
        const used = process.cpuUsage(cpu);
        record('rollup_clickhouse_cpu', (used.user + used.system) / 1000);
      },
    },
    {
      label: 'statements one by one, 30 days',
      run: async () => {
        const times = await oneByOne();
        record('alone_sum_30', Object.values(times).reduce((a, b) => a + b, 0));
        for (const [name, millis] of Object.entries(times)) record(`alone ${name}`, millis);
      },
    },
  ];
  options.log(`rollup: warm-up round, then ${options.rounds} rounds (order rotated each round)`);
  for (const task of tasks) await task.run();
  samples.clear();
  for (let round = 0; round < options.rounds; round++) {
    for (let i = 0; i < tasks.length; i++) {
      const task = tasks[(round + i) % tasks.length]!;
      await task.run();
    }
    options.log(
      `rollup: round ${round + 1}/${options.rounds}: group ${ms(last(samples, 'group_30'))}, rollup ${ms(last(samples, 'rollup_30'))}, rollup 365 ${ms(last(samples, 'rollup_365'))}, ClickHouse ${ms(last(samples, 'rollup_clickhouse'))}`,
    );
  }

  const med = (name: string) => median(samples.get(name) ?? []);
  const { rows: settings } = await pool.query<{ parallel: string; version: string }>(
    `select current_setting('max_parallel_workers_per_gather') as parallel, current_setting('server_version') as version`,
  );
  const [engine] = await clickhouse.connection.query<{ version: string }>({ text: 'select version() as version', params: {} });
  const flows = context(clickhouse).flows;
  const figures: Figures = {
    rollup_vs_group_ratio: round2(med('rollup_30') / med('group_30')),
    history_growth_ratio: round2(med('rollup_365') / med('rollup_30')),
    rollup_clickhouse_vs_postgres: round2(med('rollup_30') / med('rollup_clickhouse')),
    group_pass_ms: Math.round(med('group_30')),
    rollup_ms: Math.round(med('rollup_30')),
    rollup_clickhouse_ms: Math.round(med('rollup_clickhouse')),
    rollup_clickhouse_cpu_ms: Math.round(med('rollup_clickhouse_cpu')),
    group_pass_365_ms: Math.round(med('group_365')),
    rollup_365_ms: Math.round(med('rollup_365')),
    rollup_statements_side_by_side_sum_ms: Math.round(med('concurrent_sum_30')),
    rollup_statements_side_by_side_longest_ms: Math.round(med('concurrent_longest_30')),
    rollup_statements_one_by_one_sum_ms: Math.round(med('alone_sum_30')),
    rollup_one_by_one_vs_group_ratio: round2(med('alone_sum_30') / med('group_30')),
  };
  for (const name of [...samples.keys()].filter((key) => key.startsWith('alone '))) {
    figures[`statement_${name.slice('alone '.length).replaceAll(' ', '_')}_ms`] = Math.round(med(name));
  }
  Object.assign(figures, {
    people_with_several_versions: several,
    rounds: options.rounds,
    rollup_statements: `${3 + flows.length} side by side on separate connections (counts, status, params, one per flow); ClickHouse: the same and a second statement per flow, one at a time in-process`,
    settings: `work_mem ${postgres.h30.settings.workMem} (config), jit off, max_parallel_workers_per_gather ${settings[0]?.parallel} (server), PostgreSQL ${settings[0]?.version}; ClickHouse ${engine?.version} (chdb)`,
  });
  return figures;
}

/**
 * People who sent one event from several app versions on the day: the rollup
 * reads the day a second time only for them, so this says which case was timed.
 */
async function peopleWithSeveralVersions(pool: pg.Pool, mapping: WarehouseMapping, lo: Date, hi: Date): Promise<number> {
  const col = (role: keyof WarehouseMapping['columns']) => quoteIdent(mapping.columns[role]);
  const { rows } = await pool.query<{ n: string }>({
    text: `select count(*) as n from (
      select 1 from ${quoteQualified(mapping.table)} where ${col('time')} >= $1 and ${col('time')} < $2
      group by ${col('name')}, ${col('platform')}, coalesce(${col('user')}, ${col('device')})
      having min(coalesce(${col('version')}, '')) <> max(coalesce(${col('version')}, ''))
    ) s`,
    values: [lo, hi],
  });
  return Number(rows[0]!.n);
}

function median(values: number[]): number {
  if (values.length === 0) return Number.NaN;
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
}

function last(samples: Map<string, number[]>, name: string): number {
  return samples.get(name)?.at(-1) ?? Number.NaN;
}

function ms(value: number): string {
  return `${Math.round(value)} ms`;
}

function round2(value: number): number {
  return Math.round(value * 100) / 100;
}
