import { rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type pg from 'pg';
import { quoteIdent, quoteQualified } from '../../service/db/sql.js';
import { createClickHouseEventsQueries } from '../../service/demo/clickhouse.js';
import { createIndexQuery, createTableQueries } from '../../service/demo/generate-sql.js';
import type { ClickHouseConnection } from '../../service/warehouse/clickhouse/connection.js';
import { openEmbedded } from '../../service/warehouse/clickhouse/embedded.js';
import { ClickHouseWarehouse } from '../../service/warehouse/clickhouse/index.js';
import type { Warehouse, WarehouseEngine } from '../../service/warehouse/engine.js';
import type { WarehouseMapping } from '../../service/warehouse/mapping.js';
import { PostgresWarehouse } from '../../service/warehouse/postgres/index.js';
import { createTestSchema, type TestSchema } from './db.js';

/** A raw row of a team's events table, as the tests write it. */
export interface RawEvent {
  at: Date;
  name: string;
  user: string | null;
  device: string | null;
  platform: string;
  version: string | null;
  props: Record<string, unknown> | null;
  /** The parameters as raw JSON text instead of `props`, for what JSON.stringify cannot write (1e400). */
  propsText?: string;
  country?: string | null;
  channel?: string | null;
}

export const TEST_PLATFORMS: Record<string, string[]> = { web: ['web', 'Web'], android: ['Android'], ios: ['iOS'] };

/** `table` is schema.table in PostgreSQL, database.table in ClickHouse. */
export function testMapping(schema: string, table = 'events'): WarehouseMapping {
  return {
    table: `${schema}.${table}`,
    columns: { time: 'occurred_at', name: 'event_name', user: 'user_id', device: 'device_id', platform: 'platform', version: 'app_version', params: 'props' },
    dimensions: ['country', 'channel'],
    platforms: TEST_PLATFORMS,
  };
}

/** The demo's events table (service/demo/generate-sql.ts): the shape `testMapping` maps, with its time index. */
export async function createEventsTable(pool: pg.Pool, schema: string): Promise<void> {
  for (const query of createTableQueries(`${schema}.events`)) await pool.query(query);
  await pool.query(createIndexQuery(`${schema}.events`));
}

export async function insertEvents(pool: pg.Pool, schema: string, events: RawEvent[]): Promise<void> {
  if (events.length === 0) return;
  await pool.query({
    text: `insert into ${quoteIdent(schema)}.events
      select * from unnest($1::timestamptz[], $2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::jsonb[], $8::text[], $9::text[])`,
    values: [
      events.map((e) => e.at),
      events.map((e) => e.name),
      events.map((e) => e.user),
      events.map((e) => e.device),
      events.map((e) => e.platform),
      events.map((e) => e.version),
      events.map((e) => e.propsText ?? (e.props === null ? null : JSON.stringify(e.props))),
      events.map((e) => e.country ?? null),
      events.map((e) => e.channel ?? null),
    ],
  });
}

/** The same events table in one engine, read through the warehouse seam. */
export interface TestWarehouse {
  engine: WarehouseEngine;
  warehouse: Warehouse;
  mapping: WarehouseMapping;
  /** Adds rows to the table. */
  insert(events: RawEvent[]): Promise<void>;
  /** Empties the table. */
  clear(): Promise<void>;
  drop(): Promise<void>;
}

export const TEST_ENGINES: readonly WarehouseEngine[] = ['postgres', 'clickhouse'];

/**
 * Time for a property test of many runs: the in-process ClickHouse spends
 * tens of milliseconds planning each of the flow's statements, so sixty runs
 * take far longer than on PostgreSQL, more so on a shared machine.
 */
export function propertyTimeout(engine: WarehouseEngine): number {
  return engine === 'clickhouse' ? 300_000 : 60_000;
}

/** An events table in its own schema (PostgreSQL) or database (ClickHouse, in-process through chdb). */
export async function openTestWarehouse(engine: WarehouseEngine, prefix = 'wh'): Promise<TestWarehouse> {
  return engine === 'postgres' ? openPostgres(prefix) : openClickHouse(prefix);
}

async function openPostgres(prefix: string): Promise<TestWarehouse> {
  const db: TestSchema = await createTestSchema(prefix);
  await createEventsTable(db.pool, db.schema);
  const mapping = testMapping(db.schema);
  return {
    engine: 'postgres',
    // The schema's pool is ended by drop(), not by the warehouse.
    warehouse: new PostgresWarehouse(db.pool, mapping, { workMem: '64MB', statementTimeoutSeconds: 600 }),
    mapping,
    insert: (events) => insertEvents(db.pool, db.schema, events),
    clear: async () => void (await db.pool.query(`truncate ${quoteIdent(db.schema)}.events`)),
    drop: () => db.drop(),
  };
}

/** chdb holds one data directory per process: every test file's process gets one, shared by its tests, removed after the last. */
const CHDB_DIR = join(tmpdir(), `plumbline-test-chdb-${process.pid}`);
let chdbUsers = 0;

/** The in-process ClickHouse engine of this test process, shared by its tests; close it when done. */
export async function openTestChdb(): Promise<ClickHouseConnection> {
  const connection = await openEmbedded({ dataDir: CHDB_DIR, timeoutSeconds: 600 });
  chdbUsers += 1;
  return {
    ...connection,
    async close() {
      await connection.close();
      if (--chdbUsers === 0) await rm(CHDB_DIR, { recursive: true, force: true });
    },
  };
}

async function openClickHouse(prefix: string): Promise<TestWarehouse> {
  const connection = await openTestChdb();
  const database = `${prefix}_${Math.random().toString(16).slice(2, 12)}`;
  const mapping = testMapping(database);
  for (const query of createClickHouseEventsQueries(mapping.table)) await connection.command(query);
  return {
    engine: 'clickhouse',
    warehouse: new ClickHouseWarehouse(connection, mapping),
    mapping,
    insert: (events) => connection.insert(mapping.table, events.map(clickHouseRow)),
    clear: () => connection.command({ text: `truncate table ${quoteQualified(mapping.table)}`, params: {} }),
    async drop() {
      await connection.command({ text: `drop database if exists ${quoteIdent(database)}`, params: {} });
      await connection.close();
    },
  };
}

/** A test event as a row of the ClickHouse events table. */
export function clickHouseRow(e: RawEvent): Record<string, unknown> {
  return {
    occurred_at: e.at.toISOString().replace('T', ' ').replace('Z', ''),
    event_name: e.name,
    user_id: e.user,
    device_id: e.device,
    platform: e.platform,
    app_version: e.version,
    props: e.propsText ?? (e.props === null ? null : JSON.stringify(e.props)),
    country: e.country ?? null,
    channel: e.channel ?? null,
  };
}
