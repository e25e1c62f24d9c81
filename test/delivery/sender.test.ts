/**
 * The chat sender against a local HTTP server playing the webhook and a real
 * PostgreSQL: failures, a 429 with Retry-After, a timeout, then success, with
 * exactly one message shown per incident event, in order per incident;
 * parking and requeueing; the folder fallback; and a sender killed between
 * post and acknowledgement, whose restart posts again with the same
 * idempotency key so the receiver shows the message once.
 */
import { spawn } from 'node:child_process';
import { mkdtemp, readFile, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, describe, expect, it, onTestFailed } from 'vitest';
import { listOutbox, requeue } from '../../service/delivery/outbox.js';
import { BACKOFF_BASE_MS, BACKOFF_CAP_MS, backoffDelay, drainOutbox, parseRetryAfter } from '../../service/delivery/sender.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { clockFor, draft, judge, outboxRows } from '../incidents/fixtures.js';
import { WEBHOOK_ENV, fakeClock, senderRuntime, startReceiver, testMain, type Receiver } from './fixtures.js';

let db: TestSchema;
let receiver: Receiver | undefined;

beforeEach(async () => {
  db = await createTestSchema('snd');
  await migrate(db.pool, db.schema);
  onTestFailed(async () => {
    console.log('outbox:', JSON.stringify(await outboxRows(db.pool, db.schema), null, 1));
    console.log('requests:', JSON.stringify(receiver?.requests.map((r) => ({ key: r.key, answer: r.answer, at: r.at })), null, 1));
  });
});
afterEach(async () => {
  await receiver?.close();
  receiver = undefined;
  await db.drop();
});

/** Two incidents opened on the 18th and resolved on the 20th: four messages. */
async function twoIncidents(): Promise<void> {
  await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' }), draft({ day: '2026-11-18', platform: 'ios', version: '5.2.0' })]);
  await judge(db.pool, db.schema, '2026-11-19', []);
  await judge(db.pool, db.schema, '2026-11-20', []);
}

describe('backoff and Retry-After', () => {
  it('spreads waits uniformly up to the capped exponential (full jitter)', () => {
    expect(backoffDelay(1, () => 0.999999)).toBe(BACKOFF_BASE_MS - 1);
    expect(backoffDelay(3, () => 0.5)).toBe(2 * BACKOFF_BASE_MS);
    expect(backoffDelay(30, () => 0.999999)).toBeLessThan(BACKOFF_CAP_MS);
    expect(backoffDelay(4, () => 0)).toBe(0);
  });

  it('reads delay-seconds and HTTP dates (RFC 9110 section 10.2.3)', () => {
    const now = new Date('2026-11-19T08:30:00Z');
    expect(parseRetryAfter('7', now)).toBe(7000);
    expect(parseRetryAfter('Thu, 19 Nov 2026 08:31:00 GMT', now)).toBe(60_000);
    expect(parseRetryAfter('Thu, 19 Nov 2026 08:00:00 GMT', now)).toBe(0);
    expect(parseRetryAfter('soon', now)).toBeUndefined();
    expect(parseRetryAfter(null, now)).toBeUndefined();
    expect(parseRetryAfter('999999', now)).toBe(3_600_000);
  });
});

describe('drainOutbox', () => {
  it('survives a 500, a 429 with Retry-After and a timeout, and shows each incident event once, in order', async () => {
    await twoIncidents();
    const clock = fakeClock(clockFor('2026-11-20', 1));
    receiver = await startReceiver(clock);
    receiver.script.push({ status: 500 }, { status: 429, headers: { 'Retry-After': '7' } }, 'hang');
    const rt = senderRuntime(db.pool, db.schema);
    const result = await drainOutbox(rt, { ...clock, random: () => 0.5, timeoutMs: 300, env: { [WEBHOOK_ENV]: receiver.url } });

    expect(result).toMatchObject({ sent: 4, failures: 3, parked: 0 });
    expect(receiver.requests.map((r) => r.answer)).toEqual(['500', '429', 'hang', '200', '200', '200', '200']);
    const rows = await outboxRows(db.pool, db.schema);
    expect(rows.every((row) => row.state === 'sent')).toBe(true);
    // Exactly one shown message per (incident, event), carrying the stored payload.
    expect([...receiver.shown.keys()].sort()).toEqual(rows.map((row) => `"${row.idempotency_key}"`).sort());
    for (const row of rows) expect(receiver.shown.get(`"${row.idempotency_key}"`)).toEqual(row.payload);
    // In order per incident: opened before resolved.
    const shownOrder = [...receiver.shown.keys()];
    for (const incident of new Set(rows.map((row) => row.incident_id))) {
      const events = rows.filter((row) => row.incident_id === incident).map((row) => shownOrder.indexOf(`"${row.idempotency_key}"`));
      expect(events).toEqual([...events].sort((a, b) => a - b));
      expect(rows.filter((row) => row.incident_id === incident).map((row) => row.event)).toEqual(['opened', 'resolved']);
    }
    // Nothing was posted within the 7 s the receiver asked for after its 429.
    const at429 = receiver.requests[1]!.at!;
    expect(receiver.requests.slice(2).every((r) => r.at! - at429 >= 7000)).toBe(true);
  });

  it('parks a message after max_attempts failures, shows it, and sends it once requeued', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    const clock = fakeClock(clockFor('2026-11-18', 1));
    receiver = await startReceiver(clock);
    receiver.script.push({ status: 503 }, { status: 502 }, { status: 500 });
    const rt = senderRuntime(db.pool, db.schema, testMain({ delivery: { max_attempts: 3 } }));
    const options = { ...clock, random: () => 1, timeoutMs: 1000, env: { [WEBHOOK_ENV]: receiver.url } };
    expect(await drainOutbox(rt, options)).toMatchObject({ sent: 0, failures: 3, parked: 1 });
    const [parked] = await listOutbox(db.pool, db.schema, ['parked']);
    expect(parked).toMatchObject({ state: 'parked', attempts: 3 });
    expect(parked!.lastError).toMatch(/^HTTP 500/);
    expect(parked!.lastError).not.toContain('secret-token');
    // Backoff doubled between attempts: 5 s, then 10 s (random() = 1 takes the whole window).
    expect(receiver.requests[1]!.at! - receiver.requests[0]!.at!).toBe(BACKOFF_BASE_MS);
    expect(receiver.requests[2]!.at! - receiver.requests[1]!.at!).toBe(2 * BACKOFF_BASE_MS);

    expect(await requeue(db.pool, db.schema, parked!.id, clock.now())).toBe(true);
    expect(await requeue(db.pool, db.schema, parked!.id, clock.now())).toBe(false);
    expect(await drainOutbox(rt, options)).toMatchObject({ sent: 1, parked: 0 });
    expect(receiver.shown.size).toBe(1);
  });

  it('parks at once on a refusal that retrying cannot fix', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    const clock = fakeClock(clockFor('2026-11-18', 1));
    receiver = await startReceiver(clock);
    receiver.script.push({ status: 404 });
    const result = await drainOutbox(senderRuntime(db.pool, db.schema), { ...clock, timeoutMs: 1000, env: { [WEBHOOK_ENV]: receiver.url } });
    expect(result).toMatchObject({ sent: 0, failures: 1, parked: 1 });
    expect(receiver.requests).toHaveLength(1);
  });

  it('writes payloads to the outbox folder when no webhook is configured', async () => {
    await twoIncidents();
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-outbox-'));
    try {
      const rt = senderRuntime(db.pool, db.schema, testMain({ delivery: { outbox_dir: dir } }));
      const result = await drainOutbox(rt, { ...fakeClock(clockFor('2026-11-20', 1)), env: {} });
      expect(result.folder).toBe(join(dir, 'chat'));
      expect(result.sent).toBe(4);
      const files = (await readdir(join(dir, 'chat'))).sort();
      expect(files).toHaveLength(4);
      expect(files[0]).toMatch(/^000001-monthly_pass-20261118-[0-9a-f]{8}-opened\.json$/);
      const written = JSON.parse(await readFile(join(dir, 'chat', files[0]!), 'utf8')) as { idempotencyKey: string; payload: { blocks: unknown[] } };
      expect(written.payload.blocks.length).toBeGreaterThan(3);
      // Drained already: a second pass writes nothing more.
      expect((await drainOutbox(rt, { env: {} })).sent).toBe(0);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('delivers a message queued by a replay clock ahead of its own clock at once', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    receiver = await startReceiver();
    const earlier = fakeClock(new Date('2025-01-01T00:00:00Z'));
    const result = await drainOutbox(senderRuntime(db.pool, db.schema), { ...earlier, timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } });
    expect(result.sent).toBe(1);
    expect(earlier.now().toISOString()).toBe('2025-01-01T00:00:00.000Z');
  });

  it('posts again with the same key after the sender is killed between post and acknowledgement, to a target that deduplicates', async () => {
    await judge(db.pool, db.schema, '2026-11-18', [draft({ day: '2026-11-18' })]);
    const start = clockFor('2026-11-18', 1);
    receiver = await startReceiver();
    receiver.script.push('hang');
    const timeoutMs = 60_000;
    const child = spawn(process.execPath, ['--import', 'tsx', fileURLToPath(new URL('./sender-child.ts', import.meta.url))], {
      env: {
        ...process.env,
        CHILD_DATABASE_URL: db.url,
        CHILD_SCHEMA: db.schema,
        CHILD_WEBHOOK: receiver.url,
        CHILD_NOW: start.toISOString(),
        CHILD_TIMEOUT_MS: String(timeoutMs),
      },
      stdio: ['ignore', 'inherit', 'inherit'],
    });
    const exited = new Promise<NodeJS.Signals | null>((resolve) => child.on('exit', (_code, signal) => resolve(signal)));
    const first = await receiver.nextRequest();
    // The receiver has the message; the sender dies before it hears back.
    child.kill('SIGKILL');
    expect(await exited).toBe('SIGKILL');
    const [stuck] = await listOutbox(db.pool, db.schema, ['sending']);
    expect(stuck).toMatchObject({ attempts: 1, claimedBy: 'child' });
    receiver.shown.set(first.key!, first.body);

    // While the dead sender's lease holds, nobody else takes the message.
    const rt = senderRuntime(db.pool, db.schema, testMain({ delivery: { chat: { webhook_url: `\${${WEBHOOK_ENV}}`, honours_idempotency_key: true } } }));
    const early = await drainOutbox(rt, { now: () => new Date(start.getTime() + 1000), until: 'idle', env: { [WEBHOOK_ENV]: receiver.url } });
    expect(early.sent).toBe(0);
    // After it (leases are on database time: end it now), the restarted sender posts again with the same key.
    await db.pool.query(`update ${quoteIdent(db.schema)}.outbox set lease_until = now() where state = 'sending'`);
    const clock = fakeClock(new Date(start.getTime() + 1000));
    const result = await drainOutbox(rt, { ...clock, timeoutMs: 5000, env: { [WEBHOOK_ENV]: receiver.url } });
    expect(result.sent).toBe(1);
    expect(receiver.requests).toHaveLength(2);
    expect(receiver.requests[1]!.key).toBe(first.key);
    expect(receiver.requests[1]!.body).toEqual(first.body);
    expect(receiver.shown.size).toBe(1);
    const [row] = await outboxRows(db.pool, db.schema);
    expect(row).toMatchObject({ state: 'sent' });
    expect(first.key).toBe(`"${row!.idempotency_key}"`);
  });
});
