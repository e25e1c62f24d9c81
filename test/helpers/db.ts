import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { inject } from 'vitest';
import { quoteIdent } from '../../service/db/sql.js';

export interface TestSchema {
  /** A fresh schema name, unique to this test. */
  schema: string;
  url: string;
  pool: pg.Pool;
  /** Drops the schema and closes the pool. */
  drop(): Promise<void>;
}

/** The server chosen by the global setup (see global-setup.ts). */
export function testDatabaseUrl(): string {
  return inject('databaseUrl');
}

/** Each test works in its own schema so suites can run in parallel on one server. */
export async function createTestSchema(prefix = 't'): Promise<TestSchema> {
  const url = testDatabaseUrl();
  const schema = `${prefix}_${randomBytes(5).toString('hex')}`;
  const pool = new pg.Pool({ connectionString: url, max: 4 });
  await pool.query(`create schema ${quoteIdent(schema)}`);
  return {
    schema,
    url,
    pool,
    async drop() {
      await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
      await pool.end();
    },
  };
}
