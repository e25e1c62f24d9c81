/**
 * withTransaction keeps all of its work or none of it; withReadOnly lets the
 * server refuse writes. SQLSTATE 25006 is read_only_sql_transaction
 * (PostgreSQL documentation, Appendix A "PostgreSQL Error Codes").
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { quoteIdent } from '../../service/db/sql.js';
import { withReadOnly, withTransaction } from '../../service/db/tx.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';

describe('transactions', () => {
  let db: TestSchema;
  let table: string;
  const count = async () => Number((await db.pool.query<{ n: string }>(`select count(*) as n from ${table}`)).rows[0]!.n);

  beforeAll(async () => {
    db = await createTestSchema('tx');
    table = `${quoteIdent(db.schema)}.stops`;
    await db.pool.query(`create table ${table} (name text not null)`);
  });
  afterAll(async () => db.drop());

  it('commits what the work did and returns its result', async () => {
    const result = await withTransaction(db.pool, async (client) => {
      await client.query({ text: `insert into ${table} values ($1), ($2)`, values: ['Central Station', 'Harbour Gate'] });
      return 'stored';
    });
    expect(result).toBe('stored');
    expect(await count()).toBe(2);
  });

  it('rolls everything back and rethrows when the work throws', async () => {
    await expect(
      withTransaction(db.pool, async (client) => {
        await client.query({ text: `insert into ${table} values ($1)`, values: ['Airport Loop'] });
        throw new Error('the second statement failed');
      }),
    ).rejects.toThrow('the second statement failed');
    expect(await count()).toBe(2);
  });

  it('reads in a read-only transaction, and the server refuses a write there', async () => {
    expect(await withReadOnly(db.pool, async (client) => Number((await client.query<{ n: string }>(`select count(*) as n from ${table}`)).rows[0]!.n))).toBe(2);
    await expect(withReadOnly(db.pool, (client) => client.query(`insert into ${table} values ('Depot')`))).rejects.toMatchObject({ code: '25006' });
    expect(await count()).toBe(2);
  });

  it('gives every connection back to the pool', () => {
    expect(db.pool.totalCount - db.pool.idleCount).toBe(0);
  });
});
