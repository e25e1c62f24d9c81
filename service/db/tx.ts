/**
 * Transactions on a connection of their own, taken from a pool and given
 * back however `work` ends.
 */
import type pg from 'pg';

/** Runs `work` in a transaction: committed when it returns, rolled back (and its error rethrown) when it throws. */
export async function withTransaction<T>(pool: pg.Pool, work: (client: pg.PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  try {
    await client.query('begin');
    const result = await work(client);
    await client.query('commit');
    return result;
  } catch (error) {
    await client.query('rollback');
    throw error;
  } finally {
    client.release();
  }
}

/**
 * Runs `work` in a read-only transaction: the server refuses any write. When
 * `work` throws, its error is what the caller sees, even if the connection is
 * too broken to roll back.
 */
export async function withReadOnly<T>(pool: pg.Pool, work: (client: pg.PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  try {
    await client.query('begin read only');
    const result = await work(client);
    await client.query('commit');
    return result;
  } catch (error) {
    await client.query('rollback').catch(() => undefined);
    throw error;
  } finally {
    client.release();
  }
}
