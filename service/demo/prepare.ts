/**
 * `plumbline demo`: the Metro Pass scenario generated into the embedded
 * database, rolled up and judged day by day, as the daily run would have.
 * With the ClickHouse engine the scenario is generated in the embedded
 * PostgreSQL and copied into the in-process ClickHouse (clickhouse.ts).
 */
import { join } from 'node:path';
import { addDays } from '../config/definitions.js';
import { quoteIdent, quoteQualified } from '../db/sql.js';
import { migrate } from '../db/migrate.js';
import type { Runtime } from '../runtime.js';
import { runRange } from '../pipeline/run-range.js';
import { Progress } from '../progress.js';
import { copyEventsFromPostgres } from './clickhouse.js';
import { DEMO_FROM, DEMO_TO, generateScenario, writeGroundTruth } from './scenario.js';

/** Days of history generated before the first judged day, so baselines have something to learn from. */
export const DEMO_WARM_UP_DAYS = 28;
export const DEMO_DIR = join('.plumbline', 'demo');

export interface DemoResult {
  from: string;
  to: string;
  judgedFrom: string;
  events: number;
  groundTruthPath: string;
  millis: number;
}

export async function prepareDemo(rt: Runtime, options: { quiet?: boolean; dir?: string } = {}): Promise<DemoResult> {
  const started = performance.now();
  const [schema, table] = rt.mapping.table.includes('.') ? rt.mapping.table.split('.') : ['public', rt.mapping.table];
  // A fresh state schema: the demo always replays the whole scenario.
  await rt.state.query(`drop schema if exists ${quoteIdent(rt.stateSchema)} cascade`);
  await migrate(rt.state, rt.stateSchema);
  const generating = new Progress('generate', !options.quiet);
  // PostgreSQL generates the scenario: the warehouse itself, or the state database on its way to ClickHouse.
  const target = rt.warehouse.engine === 'postgres' ? rt.warehouse.pool : rt.state;
  const generated = await generateScenario(target, { schema: schema!, table: table!, from: DEMO_FROM, to: DEMO_TO, replace: true }, (done, total, label) =>
    generating.update(done, total, label),
  );
  if (rt.warehouse.engine === 'clickhouse') {
    if (!rt.embedded) throw new Error('the ClickHouse demo copies its events from the embedded PostgreSQL');
    const copied = await copyEventsFromPostgres(rt.warehouse.connection, { url: rt.embedded.url, table: rt.mapping.table }, rt.mapping.table);
    if (copied !== generated.events) throw new Error(`copied ${copied} of ${generated.events} demo events into ClickHouse`);
    await rt.state.query(`drop table ${quoteQualified(rt.mapping.table)}`);
  }
  const judgedFrom = addDays(DEMO_FROM, DEMO_WARM_UP_DAYS);
  // The demo shows what the daily runs would have said over these months: every message, not a backfill's summary.
  await runRange(rt, DEMO_FROM, DEMO_TO, { json: options.quiet ?? false, judgeFrom: judgedFrom, announce: true });
  const groundTruthPath = await writeGroundTruth(options.dir ?? DEMO_DIR);
  return { from: DEMO_FROM, to: DEMO_TO, judgedFrom, events: generated.events, groundTruthPath, millis: performance.now() - started };
}
