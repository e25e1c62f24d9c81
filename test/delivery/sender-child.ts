/**
 * Runs the sender in a process of its own, so the idempotency test can kill
 * it while a post is in flight. Inputs come from the environment.
 */
import pg from 'pg';
import { drainOutbox } from '../../service/delivery/sender.js';
import { WEBHOOK_ENV, senderRuntime } from './fixtures.js';

const { CHILD_DATABASE_URL, CHILD_SCHEMA, CHILD_WEBHOOK, CHILD_NOW, CHILD_TIMEOUT_MS } = process.env;
const pool = new pg.Pool({ connectionString: CHILD_DATABASE_URL, max: 2 });
await drainOutbox(senderRuntime(pool, CHILD_SCHEMA!), {
  now: () => new Date(CHILD_NOW!),
  env: { [WEBHOOK_ENV]: CHILD_WEBHOOK },
  timeoutMs: Number(CHILD_TIMEOUT_MS),
  runner: 'child',
});
await pool.end();
