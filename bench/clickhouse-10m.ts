/**
 * `rollup_clickhouse_10m_s`: the rollup of a 10M-event day with the ClickHouse
 * engine in-process (chdb), state in PostgreSQL. The day is the bench's
 * 1M-event day (rollup-data.ts) copied into ClickHouse ten times over, each
 * copy with its own people (user and device ids suffixed with the copy's
 * number), so funnels, versions and parameters keep their shape while people
 * and events grow tenfold. It runs in a child process of its own (chdb holds
 * one data directory per process), whose peak resident memory is reported:
 * Node, the ClickHouse engine and the rollup rows together.
 */
import { execFile } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import pg from 'pg';
import { toFlowDefinition, toWarehouseMapping } from '../service/config/definitions.js';
import { loadConfig } from '../service/config/load.js';
import { quoteQualified } from '../service/db/sql.js';
import { copyEventsFromPostgres } from '../service/demo/clickhouse.js';
import { rollupDay } from '../service/rollup/rollup-day.js';
import { ClickHouseWarehouse } from '../service/warehouse/clickhouse/index.js';
import { openEmbedded } from '../service/warehouse/clickhouse/embedded.js';
import { BENCH_DAY } from './rollup-data.js';
import type { Figures } from './rollup.js';

const COPIES = 10;
const ROUNDS = 2;

interface ChildResult {
  events: number;
  seconds: number[];
  cpuSeconds: number[];
  peakRssMb: number;
}

/** Runs this file as a child process and turns what it prints into figures. */
export async function benchClickHouse10m(options: { url: string; stateSchema: string; dayTable: string; log: (line: string) => void }): Promise<Figures> {
  options.log(`rollup: ClickHouse 10M-event day in a child process (${ROUNDS} measured rollups after a warm-up)`);
  const { stdout } = await promisify(execFile)(process.execPath, [...process.execArgv, fileURLToPath(import.meta.url), JSON.stringify(options)], {
    maxBuffer: 1 << 20,
  });
  const result = JSON.parse(stdout.trim().split('\n').at(-1)!) as ChildResult;
  const sorted = [...result.seconds].sort((a, b) => a - b);
  return {
    rollup_clickhouse_10m_s: Number(sorted[Math.floor(sorted.length / 2)]!.toFixed(2)),
    rollup_clickhouse_10m_runs_s: result.seconds.map((s) => s.toFixed(2)).join(', '),
    rollup_clickhouse_10m_cpu_s: result.cpuSeconds.map((s) => s.toFixed(2)).join(', '),
    rollup_clickhouse_10m_events: result.events,
    rollup_clickhouse_10m_peak_rss_mb: result.peakRssMb,
  };
}

async function child(options: { url: string; stateSchema: string; dayTable: string }): Promise<ChildResult> {
  const dataDir = await mkdtemp(join(tmpdir(), 'plumbline-bench-10m-'));
  const connection = await openEmbedded({ dataDir, timeoutSeconds: 3600 });
  const state = new pg.Pool({ connectionString: options.url, max: 4 });
  try {
    await copyEventsFromPostgres(connection, { url: options.url, table: options.dayTable }, 'bench.day');
    await connection.command({ text: 'create table bench.events as bench.day', params: {} });
    await connection.command({
      text: `insert into bench.events
select occurred_at, event_name, concat(user_id, '~', toString(copy.number)), concat(device_id, '~', toString(copy.number)), platform, app_version, props, country, channel
from ${quoteQualified('bench.day')} as day, numbers({copies:UInt32}) as copy`,
      params: { copies: COPIES },
    });
    await connection.command({ text: 'drop table bench.day', params: {} });
    const config = loadConfig('config', { env: {} });
    const warehouse = new ClickHouseWarehouse(connection, { ...toWarehouseMapping(config.main), table: 'bench.events' });
    const ctx = { warehouse, state, stateSchema: options.stateSchema, timezone: config.main.timezone, flows: config.flows.map((flow) => toFlowDefinition(flow.config)) };
    const range = await warehouse.dayBounds(BENCH_DAY, ctx.timezone);
    const events = (await warehouse.hourCounts(range, [])).reduce((sum, row) => sum + row.events, 0);
    const seconds: number[] = [];
    const cpuSeconds: number[] = [];
    for (let round = 0; round <= ROUNDS; round++) {
      const t0 = performance.now();
      const cpu = process.cpuUsage();
      await rollupDay(ctx, BENCH_DAY);
      const used = process.cpuUsage(cpu);
      if (round > 0) {
        seconds.push((performance.now() - t0) / 1000);
        cpuSeconds.push((used.user + used.system) / 1e6);
      }
    }
    return { events, seconds, cpuSeconds, peakRssMb: Math.round(process.resourceUsage().maxRSS / 1024) };
  } finally {
    await connection.close();
    await state.end();
    await rm(dataDir, { recursive: true, force: true });
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  console.log(JSON.stringify(await child(JSON.parse(process.argv[2]!) as { url: string; stateSchema: string; dayTable: string })));
}
