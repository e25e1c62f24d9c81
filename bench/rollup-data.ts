/**
 * Bench data for the rollup: the Metro Pass scenario's weekday 2026-10-14 at
 * about 1M events, in two events tables that differ only in their history
 * (30 or 365 lighter days around the judged day). Built from the demo
 * generator's pieces, assembled in time order (as in a table loaded while the
 * events arrive), then indexed on the time column and vacuumed
 * (hint bits and visibility map set, as on a settled warehouse table).
 */
import type pg from 'pg';
import { addDays } from '../service/config/definitions.js';
import { quoteIdent } from '../service/db/sql.js';
import { DEFAULT_SEED, DEMO_TIMEZONE, generateScenario } from '../service/demo/scenario.js';

export const BENCH_DAY = '2026-10-14';
/** ~1.05M events on the judged day (the generator author's measurement). */
export const DAY_SCALE = 45;
/** ~4,000 events on each history day. */
export const HISTORY_SCALE = 0.2;
/** History days after the judged day: the funnel reads past midnight, so the table goes on. */
const DAYS_AFTER = 2;

export const SCHEMAS = { h30: 'bench_rollup_h30', h365: 'bench_rollup_h365', parts: 'bench_rollup_parts' } as const;
export type HistoryKey = 'h30' | 'h365';
export const HISTORY_DAYS: Record<HistoryKey, number> = { h30: 30, h365: 365 };

export interface BenchTables {
  /** Qualified events table per history length. */
  tables: Record<HistoryKey, string>;
  /** Rows per table, and of the judged day alone (local day bounds). */
  rows: Record<HistoryKey, number>;
  dayEvents: number;
  /** Milliseconds spent generating and assembling; 0 when reused. */
  buildMillis: number;
  reused: boolean;
}

const FINGERPRINT = `plumbline bench: day ${BENCH_DAY} scale ${DAY_SCALE}, history scale ${HISTORY_SCALE}, seed ${DEFAULT_SEED}`;

/** Builds both tables, or reuses them when `reuse` is set and a previous `--keep` run left the same data. */
export async function prepareBenchTables(pool: pg.Pool, options: { reuse: boolean; log: (line: string) => void }): Promise<BenchTables> {
  const tables = { h30: `${SCHEMAS.h30}.events`, h365: `${SCHEMAS.h365}.events` };
  const started = performance.now();
  let reused = false;
  if (options.reuse && (await fingerprintMatches(pool))) {
    reused = true;
    options.log('rollup: reusing the bench tables left by a --keep run');
  } else {
    await buildTables(pool, options.log);
  }
  const rows = {} as Record<HistoryKey, number>;
  for (const key of ['h30', 'h365'] as const) {
    const { rows: found } = await pool.query<{ n: string }>(`select count(*) as n from ${quoteIdent(SCHEMAS[key])}.events`);
    rows[key] = Number(found[0]!.n);
  }
  const { rows: day } = await pool.query<{ n: string }>({
    text: `select count(*) as n from ${quoteIdent(SCHEMAS.h30)}.events
           where occurred_at >= ($1::date)::timestamp at time zone $2 and occurred_at < ($1::date + 1)::timestamp at time zone $2`,
    values: [BENCH_DAY, DEMO_TIMEZONE],
  });
  return { tables, rows, dayEvents: Number(day[0]!.n), buildMillis: reused ? 0 : performance.now() - started, reused };
}

export async function dropBenchTables(pool: pg.Pool): Promise<void> {
  for (const schema of Object.values(SCHEMAS)) await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
}

async function fingerprintMatches(pool: pg.Pool): Promise<boolean> {
  const { rows } = await pool.query<{ h30: string | null; h365: string | null }>({
    text: `select obj_description(to_regnamespace($1), 'pg_namespace') as h30, obj_description(to_regnamespace($2), 'pg_namespace') as h365`,
    values: [SCHEMAS.h30, SCHEMAS.h365],
  });
  return rows[0]?.h30 === FINGERPRINT && rows[0]?.h365 === FINGERPRINT;
}

async function buildTables(pool: pg.Pool, log: (line: string) => void): Promise<void> {
  await dropBenchTables(pool);
  const parts = quoteIdent(SCHEMAS.parts);
  const generate = async (table: string, from: string, to: string, scale: number) => {
    const result = await generateScenario(pool, { schema: SCHEMAS.parts, table, from, to, scale, replace: true });
    log(`rollup: generated ${table} ${from}..${to} at scale ${scale}: ${result.events} events in ${(result.millis / 1000).toFixed(1)} s`);
  };
  // The judged day and its history are generated apart: scales differ, and the day must not get history rows too.
  await generate('day', BENCH_DAY, BENCH_DAY, DAY_SCALE);
  await generate('before', addDays(BENCH_DAY, -(HISTORY_DAYS.h365 - DAYS_AFTER)), addDays(BENCH_DAY, -1), HISTORY_SCALE);
  await generate('after', addDays(BENCH_DAY, 1), addDays(BENCH_DAY, DAYS_AFTER), HISTORY_SCALE);

  for (const key of ['h30', 'h365'] as const) {
    const schema = quoteIdent(SCHEMAS[key]);
    const firstDay = addDays(BENCH_DAY, -(HISTORY_DAYS[key] - DAYS_AFTER));
    const t0 = performance.now();
    await pool.query(`create schema ${schema}`);
    await pool.query({ text: `comment on schema ${schema} is ${literal(FINGERPRINT)}`, values: [] });
    // In time order, as a table loaded while events arrive lies on disk (INSERT ... SELECT runs serially, keeping that order).
    await pool.query(`create table ${schema}.events (like ${parts}.day)`);
    await pool.query({
      text: `insert into ${schema}.events select * from ${parts}.before where occurred_at >= ($1::date)::timestamp at time zone $2 order by occurred_at`,
      values: [firstDay, DEMO_TIMEZONE],
    });
    await pool.query(`insert into ${schema}.events select * from ${parts}.day order by occurred_at`);
    await pool.query(`insert into ${schema}.events select * from ${parts}.after order by occurred_at`);
    await pool.query(`create index events_occurred_at_idx on ${schema}.events (occurred_at)`);
    await pool.query(`vacuum (analyze) ${schema}.events`);
    log(`rollup: assembled ${SCHEMAS[key]}.events (${HISTORY_DAYS[key]} history days) in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
  }
  await pool.query(`drop schema ${parts} cascade`);
}

/** `comment on` takes no parameters: the fixed fingerprint is quoted as a literal. */
function literal(text: string): string {
  return `'${text.replaceAll("'", "''")}'`;
}
