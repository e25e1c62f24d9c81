/**
 * What a state schema holds, reduced to what must not depend on how a
 * backfill got there: every row of the rollup, judgement, incident and outbox
 * tables, without ids and timestamps (sequence values and wall-clock times
 * differ between runs by design), sorted, and hashed per table.
 */
import { createHash } from 'node:crypto';
import type pg from 'pg';
import { quoteIdent } from '../../service/db/sql.js';

/** The tables compared: rollups, findings, verdicts, incidents and their sightings, the outbox. */
export const COMPARED_TABLES = [
  'event_days',
  'param_days',
  'funnel_days',
  'step_days',
  'day_status',
  'findings',
  'judged_days',
  'incidents',
  'incident_days',
  'outbox',
] as const;

/** Columns that differ between equal outcomes: generated ids, the run that wrote a row, and instants. */
const VOLATILE = /^(id|run_id|claimed_by)$|_at$/;

export type Snapshot = Record<(typeof COMPARED_TABLES)[number], { rows: number; hash: string }>;

export async function snapshotState(pool: pg.Pool, schema: string): Promise<Snapshot> {
  const snapshot = {} as Snapshot;
  for (const table of COMPARED_TABLES) {
    const { rows } = await pool.query<{ row: Record<string, unknown> }>(`select to_jsonb(t) as row from ${quoteIdent(schema)}.${quoteIdent(table)} t`);
    const lines = rows
      .map(({ row }) => JSON.stringify(Object.fromEntries(Object.entries(row).filter(([key]) => !VOLATILE.test(key)).sort(([a], [b]) => (a < b ? -1 : 1)))))
      .sort();
    snapshot[table] = { rows: lines.length, hash: createHash('sha256').update(lines.join('\n')).digest('hex').slice(0, 16) };
  }
  return snapshot;
}

/** Tables whose rows differ between two snapshots. */
export function differingTables(a: Snapshot, b: Snapshot): string[] {
  return COMPARED_TABLES.filter((table) => a[table].hash !== b[table].hash);
}
