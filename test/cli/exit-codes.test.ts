/**
 * Exit codes of database and rollup failures: the documented 4 ("a run,
 * rollup, send or delivery step failed"), never 70, which means a bug in
 * plumbline. Errors are real ones: a PostgreSQL error, a refused connection,
 * an in-process ClickHouse error, and the whole process on a missing events table.
 */
import { spawnSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { describe, expect, it } from 'vitest';
import { EXIT, isDatabaseFailure } from '../../service/cli/exit-codes.js';
import { quoteIdent } from '../../service/db/sql.js';
import { testDatabaseUrl } from '../helpers/db.js';
import { openTestChdb } from '../helpers/warehouse.js';

const caught = async (work: () => Promise<unknown>) => {
  try {
    await work();
  } catch (error) {
    return error;
  }
  throw new Error('expected a failure');
};

describe('isDatabaseFailure', () => {
  it('tells database failures from plumbline bugs', async () => {
    const pool = new pg.Pool({ connectionString: testDatabaseUrl(), max: 1 });
    const missingTable = await caught(() => pool.query('select * from no_such_schema.no_such_table'));
    await pool.end();
    const refused = await caught(async () => {
      const client = new pg.Client({ connectionString: 'postgres://postgres@127.0.0.1:1/none', connectionTimeoutMillis: 2000 });
      await client.connect();
    });
    const chdb = await openTestChdb();
    const clickhouse = await caught(() => chdb.query({ text: 'select * from no_such_database.no_such_table', params: {} }));
    await chdb.close();
    expect(isDatabaseFailure(missingTable)).toBe(true);
    expect(isDatabaseFailure(refused)).toBe(true);
    expect(isDatabaseFailure(clickhouse)).toBe(true);
    expect(isDatabaseFailure(new Error('wrapped', { cause: missingTable }))).toBe(true);
    expect(isDatabaseFailure(new TypeError("Cannot read properties of undefined (reading 'message')"))).toBe(false);
    expect(isDatabaseFailure(new Error('plumbline bug'))).toBe(false);
    expect(isDatabaseFailure('a string')).toBe(false);
  }, 60_000);
});

describe('plumbline run against a warehouse without the events table', () => {
  it('exits 4 and says why', async () => {
    const root = mkdtempSync(join(tmpdir(), 'plumbline-exit-'));
    const schema = `exit_${Math.random().toString(16).slice(2, 10)}`;
    try {
      cpSync('config', join(root, 'config'), { recursive: true });
      const file = join(root, 'config', 'plumbline.yaml');
      writeFileSync(file, readFileSync(file, 'utf8').replace('events_table: transit.events', 'events_table: missing_schema.events').replace('schema: plumbline', `schema: ${schema}`));
      const tsx = pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href;
      const result = spawnSync(process.execPath, ['--import', tsx, join(process.cwd(), 'service', 'cli', 'main.ts'), 'run', '--date', '2026-06-10', '--now', '2026-06-11T12:00:00Z'], {
        cwd: root,
        encoding: 'utf8',
        env: { ...process.env, PLUMBLINE_WAREHOUSE_URL: testDatabaseUrl(), PLUMBLINE_STATE_URL: '' },
        timeout: 120_000,
      });
      expect(result.stderr).toContain('missing_schema');
      expect(result.status).toBe(EXIT.failed);
    } finally {
      rmSync(root, { recursive: true, force: true });
      const pool = new pg.Pool({ connectionString: testDatabaseUrl(), max: 1 });
      await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
      await pool.end();
    }
  }, 180_000);
});
