import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type pg from 'pg';
import { projectPath } from '../paths.js';
import { quoteIdent } from './sql.js';
import { withTransaction } from './tx.js';

const MIGRATIONS_DIR = projectPath('service', 'db', 'migrations');

export interface Migration {
  version: number;
  name: string;
  sql: string;
}

/** Numbered, append-only files: `NNN_name.sql`. A file, once released, never changes. */
export function listMigrations(dir = MIGRATIONS_DIR): Migration[] {
  return readdirSync(dir)
    .filter((file) => /^\d{3}_[a-z0-9_]+\.sql$/.test(file))
    .sort()
    .map((file) => ({ version: Number(file.slice(0, 3)), name: file.slice(4, -4), sql: readFileSync(join(dir, file), 'utf8') }));
}

/**
 * Brings the state schema up to date. Runs in one transaction under an
 * advisory lock, so replicas starting together apply each migration once and
 * a failure leaves the schema as it was. Returns the versions applied.
 */
export async function migrate(pool: pg.Pool, schema: string, migrations = listMigrations()): Promise<number[]> {
  return await withTransaction(pool, (client) => applyMigrations(client, schema, migrations));
}

/** The migrations, inside the caller's transaction (a backtest's throw-away schema lives and dies in one). */
export async function applyMigrations(client: pg.ClientBase, schema: string, migrations = listMigrations()): Promise<number[]> {
  const s = quoteIdent(schema);
  await client.query({ text: 'select pg_advisory_xact_lock(hashtext($1))', values: [`plumbline.migrate.${schema}`] });
  await client.query(`create schema if not exists ${s}`);
  await client.query(`create table if not exists ${s}.migrations (version integer primary key, name text not null, applied_at timestamptz not null default now())`);
  const { rows } = await client.query<{ version: number }>(`select version from ${s}.migrations`);
  const applied = new Set(rows.map((row) => row.version));
  const done: number[] = [];
  await client.query(`set local search_path to ${s}`);
  for (const migration of migrations) {
    if (applied.has(migration.version)) continue;
    await client.query(migration.sql);
    await client.query({ text: `insert into ${s}.migrations (version, name) values ($1, $2)`, values: [migration.version, migration.name] });
    done.push(migration.version);
  }
  // Later statements of the same transaction qualify their tables; do not leave them in this schema.
  await client.query('reset search_path');
  return done;
}
