/**
 * The chat sender under concurrency and failure: several drains over one
 * outbox (each message posted exactly once, thanks to the `skip locked`
 * claim), a state database that drops right after a post, a sender that dies
 * mid-post against a target that does not deduplicate, and a `Retry-After`
 * that parks the channel instead of holding the drain.
 */
import { afterEach, beforeEach, describe, expect, it, onTestFailed } from 'vitest';
import pg from 'pg';
import { listOutbox, requeue } from '../../service/delivery/outbox.js';
import { UnrecordedOutcomes, drainOutbox, type SenderRuntime } from '../../service/delivery/sender.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { clockFor, draft, judge, outboxRows } from '../incidents/fixtures.js';
import { WEBHOOK_ENV, fakeClock, senderRuntime, startReceiver, testMain, type Receiver } from './fixtures.js';

let db: TestSchema;
let receiver: Receiver | undefined;

beforeEach(async () => {
  db = await createTestSchema('sndr');
  await migrate(db.pool, db.schema);
  onTestFailed(async () => {
    console.log('outbox:', JSON.stringify(await outboxRows(db.pool, db.schema), null, 1));
  });
});
afterEach(async () => {
  await receiver?.close();
  receiver = undefined;
  await db.drop();
});

/** `n` incidents opened on the 18th and resolved on the 20th: 2n messages, opened before resolved per incident. */
async function manyIncidents(n: number): Promise<void> {
  const drafts = Array.from({ length: n }, (_, i) => draft({ day: '2026-11-18', version: `7.${i}.0` }));
  await judge(db.pool, db.schema, '2026-11-18', drafts);
  await judge(db.pool, db.schema, '2026-11-19', []);
  await judge(db.pool, db.schema, '2026-11-20', []);
}

/** Makes the leases of `sending` messages end now, as if their time had passed (leases are on database time). */
async function expireLeases(): Promise<void> {
  await db.pool.query(`update ${quoteIdent(db.schema)}.outbox set lease_until = now() - interval '1 second' where state = 'sending'`);
}

/** A runtime whose state pool fails the statement matching `failing` once, as a database dropping at that moment would. */
function droppingAt(rt: SenderRuntime, failing: RegExp): SenderRuntime & { dropped: () => boolean } {
  let dropped = false;
  const pool = new Proxy(rt.state, {
    get(target, property, receiverObject) {
      if (property !== 'query') return Reflect.get(target, property, receiverObject) as unknown;
      return (query: pg.QueryConfig) => {
        if (!dropped && failing.test(query.text)) {
          dropped = true;
          return Promise.reject(new Error('Connection terminated unexpectedly'));
        }
        return target.query(query);
      };
    },
  });
  return { ...rt, state: pool, dropped: () => dropped };
}

describe('several senders over one outbox', () => {
  it('posts each message exactly once with six drains running at once', async () => {
    await manyIncidents(30);
    receiver = await startReceiver();
    // Each drain on its own pool, as replicas would be.
    const pools = Array.from({ length: 6 }, () => new pg.Pool({ connectionString: db.url, max: 2 }));
    try {
      const results = await Promise.all(
        pools.map((pool, i) =>
          drainOutbox(senderRuntime(pool, db.schema), { runner: `replica-${i}`, timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver!.url } }),
        ),
      );
      const rows = await outboxRows(db.pool, db.schema);
      expect(rows).toHaveLength(60);
      expect(rows.every((row) => row.state === 'sent')).toBe(true);
      const posts = new Map<string, number>();
      for (const request of receiver.requests) posts.set(request.key!, (posts.get(request.key!) ?? 0) + 1);
      expect([...posts.values()].filter((count) => count !== 1)).toEqual([]);
      expect(posts.size).toBe(60);
      expect(results.reduce((sum, result) => sum + result.sent, 0)).toBe(60);
      // The work was shared, not done by one drain while the others waited.
      expect(results.filter((result) => result.sent > 0).length).toBeGreaterThan(1);
    } finally {
      await Promise.all(pools.map((pool) => pool.end()));
    }
  });
});

describe('a post whose acknowledgement cannot be recorded', () => {
  it('is recorded by the next drain of the same process, never posted twice', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    receiver = await startReceiver();
    const options = { ...fakeClock(clockFor('2026-11-18', 1)), timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } };
    const unrecorded = new UnrecordedOutcomes();
    const rt = droppingAt(senderRuntime(db.pool, db.schema), /set state = 'sent'/);
    await expect(drainOutbox(rt, { ...options, unrecorded })).rejects.toThrow('Connection terminated');
    expect(rt.dropped()).toBe(true);
    expect(unrecorded.size).toBe(1);
    expect(receiver.requests).toHaveLength(1);
    // The database is back, and the lease has long passed by the time the next tick comes.
    await expireLeases();
    const result = await drainOutbox(rt, { ...options, unrecorded });
    expect(result.sent).toBe(0);
    expect(unrecorded.size).toBe(0);
    expect(receiver.requests).toHaveLength(1);
    expect((await outboxRows(db.pool, db.schema))[0]).toMatchObject({ state: 'sent' });
  });

  it('is left unconfirmed, not posted again, when the sender died and the target does not deduplicate', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    receiver = await startReceiver();
    const options = { ...fakeClock(clockFor('2026-11-18', 1)), timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } };
    // The process that posted is gone with its memory: a fresh drain finds the message `sending`.
    const dying = droppingAt(senderRuntime(db.pool, db.schema), /set state = 'sent'/);
    await expect(drainOutbox(dying, options)).rejects.toThrow('Connection terminated');
    const rt = senderRuntime(db.pool, db.schema);
    expect((await drainOutbox(rt, { ...options, until: 'idle' })).sent).toBe(0);
    await expireLeases();
    expect((await drainOutbox(rt, options)).sent).toBe(0);
    expect(receiver.requests).toHaveLength(1);
    const [row] = await listOutbox(db.pool, db.schema, ['unconfirmed']);
    expect(row).toMatchObject({ state: 'unconfirmed', attempts: 1 });
    expect(row!.lastError).toMatch(/may have been shown/);
    // A person who checked the channel and found it missing sends it again.
    expect(await requeue(db.pool, db.schema, row!.id, options.now())).toBe(true);
    expect((await drainOutbox(rt, options)).sent).toBe(1);
    expect(receiver.requests).toHaveLength(2);
  });

  it('does not hold back the next message of the same incident while unconfirmed', async () => {
    await manyIncidents(1);
    receiver = await startReceiver();
    const options = { ...fakeClock(clockFor('2026-11-20', 1)), timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } };
    await expect(drainOutbox(droppingAt(senderRuntime(db.pool, db.schema), /set state = 'sent'/), options)).rejects.toThrow();
    await expireLeases();
    expect((await drainOutbox(senderRuntime(db.pool, db.schema), options)).sent).toBe(1);
    expect((await outboxRows(db.pool, db.schema)).map((row) => [row.event, row.state])).toEqual([
      ['opened', 'unconfirmed'],
      ['resolved', 'sent'],
    ]);
  });
});

describe('Retry-After', () => {
  it('parks the channel until then instead of waiting inside the drain', async () => {
    await manyIncidents(2);
    const clock = fakeClock(clockFor('2026-11-20', 1));
    receiver = await startReceiver(clock);
    receiver.script.push({ status: 429, headers: { 'Retry-After': '3600' } });
    const rt = senderRuntime(db.pool, db.schema);
    const options = { ...clock, timeoutMs: 5000, until: 'idle' as const, env: { [WEBHOOK_ENV]: receiver.url } };
    const started = clock.now().getTime();
    const first = await drainOutbox(rt, options);
    // The drain returned at once: no sleep moved the clock.
    expect(clock.now().getTime()).toBe(started);
    expect(first).toMatchObject({ sent: 0, failures: 1 });
    // A drain a minute later (another tick, or another replica) posts nothing to the paused channel.
    clock.advance(60_000);
    expect((await drainOutbox(rt, options)).sent).toBe(0);
    expect(receiver.requests).toHaveLength(1);
    // Once the hour has passed, all four go.
    clock.advance(3_600_000);
    expect((await drainOutbox(rt, options)).sent).toBe(4);
  });

  it('waits the pause out in a drain asked to empty the outbox', async () => {
    await manyIncidents(1);
    const clock = fakeClock(clockFor('2026-11-20', 1));
    receiver = await startReceiver(clock);
    receiver.script.push({ status: 429, headers: { 'Retry-After': '120' } });
    const result = await drainOutbox(senderRuntime(db.pool, db.schema, testMain()), { ...clock, timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } });
    expect(result).toMatchObject({ sent: 2, failures: 1 });
    expect(receiver.requests[1]!.at! - receiver.requests[0]!.at!).toBeGreaterThanOrEqual(120_000);
  });
});
