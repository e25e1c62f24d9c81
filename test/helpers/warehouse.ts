import type pg from 'pg';
import { quoteIdent } from '../../service/db/sql.js';
import { createIndexQuery, createTableQueries } from '../../service/demo/generate-sql.js';
import type { WarehouseMapping } from '../../service/warehouse/queries.js';

/** A raw row of a team's events table, as the tests write it. */
export interface RawEvent {
  at: Date;
  name: string;
  user: string | null;
  device: string | null;
  platform: string;
  version: string | null;
  props: Record<string, unknown> | null;
  country?: string | null;
  channel?: string | null;
}

export const TEST_PLATFORMS: Record<string, string[]> = { web: ['web', 'Web'], android: ['Android'], ios: ['iOS'] };

export function testMapping(schema: string): WarehouseMapping {
  return {
    table: `${schema}.events`,
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
      events.map((e) => (e.props === null ? null : JSON.stringify(e.props))),
      events.map((e) => e.country ?? null),
      events.map((e) => e.channel ?? null),
    ],
  });
}
