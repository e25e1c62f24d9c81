/**
 * The chat sender: drains the outbox, one message at a time, oldest first.
 *
 * - Each message carries a stable key (`outbox.idempotency_key`), sent as the
 *   `Idempotency-Key` header (IETF httpapi draft "The Idempotency-Key HTTP
 *   Header Field"). The message is marked `sending` (with a lease on database
 *   time) before the post and `sent` after it.
 * - The answer is first noted in the sender's memory (`UnrecordedOutcomes`),
 *   then written to the state database. If that write fails (the database
 *   went away right after the post), the drain stops and the next drain of
 *   the same process writes the noted answers before claiming anything, so a
 *   message shown once is not posted again.
 * - A sender that dies between post and acknowledgement leaves its message
 *   `sending`. Once the lease passes, a target that honours the key
 *   (`delivery.chat.honours_idempotency_key`) gets it again with the same key
 *   and shows it once; any other target (Slack's incoming webhooks promise
 *   nothing) does not: the message becomes `unconfirmed` for a person to
 *   check, since a missed acknowledgement is better than a second post.
 * - Failures back off exponentially with full jitter: the wait before attempt
 *   n+1 is uniform in [0, min(cap, base * 2^(n-1))] (M. Brooker, "Exponential
 *   Backoff And Jitter", AWS Architecture Blog, 2015). A 429 answer's
 *   `Retry-After` (seconds or an HTTP date, RFC 9110 section 10.2.3) replaces
 *   the backoff and pauses the whole channel, since the limit is the
 *   receiver's, not the message's. The pause is stored (`channel_pauses`), so
 *   every replica honours it and no drain waits it out while holding a pass.
 * - After `delivery.max_attempts` failed attempts, or a refusal that retrying
 *   cannot fix (a 4xx other than 408 and 429: a revoked webhook, a payload it
 *   rejects), the message is parked with its last error for a person
 *   (`plumbline outbox`, the status page).
 * - Without a webhook configured (the demo), each payload is written as a
 *   JSON file under `delivery.outbox_dir`/chat instead.
 *
 * The webhook URL is a secret: it is resolved at the moment of use and never
 * logged or stored in an error.
 */
import { mkdir, rename, writeFile } from 'node:fs/promises';
import { hostname } from 'node:os';
import { join, resolve } from 'node:path';
import type pg from 'pg';
import { IncomingWebhook, IncomingWebhookHTTPError, IncomingWebhookRequestError } from '@slack/webhook';
import { resolveReference } from '../config/load.js';
import type { MainConfig } from '../config/schema.js';
import type { Logger } from '../log.js';
import { claimNext, markFailed, markSent, nextDue, pauseChannel, settleExpiredLeases, type OutboxMessage } from './outbox.js';

/** What the sender needs of the runtime. */
export interface SenderRuntime {
  state: pg.Pool;
  stateSchema: string;
  log: Logger;
  config: { main: MainConfig };
}

export interface DrainOptions {
  /** The clock (tests pass a fake one). */
  now?: () => Date;
  /** Waiting (tests pass one that moves the fake clock). */
  sleep?: (ms: number) => Promise<void>;
  /** Uniform in [0, 1), for the jitter. */
  random?: () => number;
  /**
   * 'drained' (default): wait through backoffs until every message is sent or
   * parked. 'idle': return as soon as nothing is due (a scheduler calls again).
   */
  until?: 'drained' | 'idle';
  /** Per request. */
  timeoutMs?: number;
  env?: NodeJS.ProcessEnv;
  /** Name recorded on claimed messages. */
  runner?: string;
  /** Answers not yet recorded in the state database; one per process, so the next drain records them (a fresh one by default). */
  unrecorded?: UnrecordedOutcomes;
}

type Outcome = { sent: true } | { sent: false; error: string; next: { retryAt: Date } | { parkedAt: Date } };

/**
 * What posts returned that the state database has not recorded yet, keyed by
 * outbox id. Written before the state write that can fail, replayed first by
 * the next drain.
 */
export class UnrecordedOutcomes {
  private readonly outcomes = new Map<number, Outcome>();

  get size(): number {
    return this.outcomes.size;
  }

  note(id: number, outcome: Outcome): void {
    this.outcomes.set(id, outcome);
  }

  /** Records one noted outcome, then forgets it; a failed write leaves it noted and throws. */
  async record(rt: SenderRuntime, id: number, now: Date): Promise<void> {
    const outcome = this.outcomes.get(id);
    if (!outcome) return;
    if (outcome.sent) await markSent(rt.state, rt.stateSchema, id, now);
    else await markFailed(rt.state, rt.stateSchema, id, outcome.error, outcome.next);
    this.outcomes.delete(id);
  }

  async recordAll(rt: SenderRuntime, now: Date): Promise<number> {
    const ids = [...this.outcomes.keys()];
    for (const id of ids) await this.record(rt, id, now);
    return ids.length;
  }
}

export interface DrainResult {
  sent: number;
  /** Failed attempts (each retried or parked). */
  failures: number;
  parked: number;
  /** Set when payloads went to files instead of a webhook. */
  folder?: string;
  files: string[];
}

export const BACKOFF_BASE_MS = 5_000;
export const BACKOFF_CAP_MS = 15 * 60_000;
export const DEFAULT_TIMEOUT_MS = 10_000;
/** A lease outlives the request it covers by this much. */
const LEASE_MARGIN_MS = 30_000;
/** Longest `Retry-After` honoured, so a misconfigured receiver cannot stall delivery for days. */
export const MAX_RETRY_AFTER_MS = 60 * 60_000;
/** Shortest wait when due messages are all held by other senders. */
const MIN_WAIT_MS = 250;

/** Full jitter: uniform in [0, min(cap, base * 2^(attempt-1))]. */
export function backoffDelay(attempt: number, random: () => number): number {
  return Math.floor(random() * Math.min(BACKOFF_CAP_MS, BACKOFF_BASE_MS * 2 ** (attempt - 1)));
}

/** `Retry-After` as milliseconds from `now`: delay-seconds or an HTTP date (RFC 9110 section 10.2.3); undefined when absent or unreadable. */
export function parseRetryAfter(value: string | null | undefined, now: Date): number | undefined {
  const text = value?.trim();
  if (!text) return undefined;
  let ms: number;
  if (/^\d+$/.test(text)) ms = Number(text) * 1000;
  else {
    const at = Date.parse(text);
    if (Number.isNaN(at)) return undefined;
    ms = at - now.getTime();
  }
  return Math.min(Math.max(ms, 0), MAX_RETRY_AFTER_MS);
}

type PostOutcome = { ok: true; file?: string } | { ok: false; error: string; permanent: boolean; retryAfterMs?: number };

export function runnerName(): string {
  return `${hostname()}:${process.pid}`;
}

/** Drains the chat outbox; see the module comment. */
export async function drainOutbox(rt: SenderRuntime, options: DrainOptions = {}): Promise<DrainResult> {
  const now = options.now ?? (() => new Date());
  const sleep = options.sleep ?? ((ms: number) => new Promise<void>((done) => setTimeout(done, ms)));
  const random = options.random ?? Math.random;
  const timeoutMs = options.timeoutMs ?? DEFAULT_TIMEOUT_MS;
  const runner = options.runner ?? runnerName();
  const { delivery } = rt.config.main;
  const url = resolveReference(delivery.chat.webhook_url, options.env ?? process.env);
  const folder = url === undefined ? resolve(delivery.outbox_dir, 'chat') : undefined;
  const result: DrainResult = { sent: 0, failures: 0, parked: 0, files: [], ...(folder !== undefined ? { folder } : {}) };
  const repostExpired = folder !== undefined || delivery.chat.honours_idempotency_key;
  const unrecorded = options.unrecorded ?? new UnrecordedOutcomes();
  const recorded = await unrecorded.recordAll(rt, now());
  if (recorded > 0) rt.log.info({ recorded }, 'recorded answers of posts made before the state database went away');
  for (;;) {
    if (!repostExpired) {
      for (const id of await settleExpiredLeases(rt.state, rt.stateSchema)) {
        rt.log.error({ outbox: id }, 'chat message unconfirmed: its sender stopped between post and acknowledgement; see `plumbline outbox`');
      }
    }
    const message = await claimNext(rt.state, rt.stateSchema, now(), timeoutMs + LEASE_MARGIN_MS, runner, repostExpired);
    if (!message) {
      if (options.until === 'idle') break;
      const due = await nextDue(rt.state, rt.stateSchema, now());
      if (due === undefined) break;
      await sleep(Math.max(due.getTime() - now().getTime(), MIN_WAIT_MS));
      continue;
    }
    const context = { outbox: message.id, incident: message.incidentId, event: message.event, attempt: message.attempts };
    const outcome = folder !== undefined ? await writeToFolder(folder, message) : await post(url!, message, timeoutMs, now);
    if (outcome.ok) {
      unrecorded.note(message.id, { sent: true });
      await unrecorded.record(rt, message.id, now());
      result.sent++;
      if (outcome.file !== undefined) result.files.push(outcome.file);
      rt.log.info(context, 'chat message delivered');
      continue;
    }
    result.failures++;
    if (outcome.permanent || message.attempts >= delivery.max_attempts) {
      unrecorded.note(message.id, { sent: false, error: outcome.error, next: { parkedAt: now() } });
      await unrecorded.record(rt, message.id, now());
      result.parked++;
      rt.log.error({ ...context, error: outcome.error }, 'chat message parked: see `plumbline outbox`');
      continue;
    }
    const delay = outcome.retryAfterMs ?? backoffDelay(message.attempts, random);
    const retryAt = new Date(now().getTime() + delay);
    unrecorded.note(message.id, { sent: false, error: outcome.error, next: { retryAt } });
    if (outcome.retryAfterMs !== undefined) await pauseChannel(rt.state, rt.stateSchema, retryAt, outcome.error);
    await unrecorded.record(rt, message.id, now());
    rt.log.warn({ ...context, error: outcome.error, retryInMs: delay }, 'chat message not delivered; will retry');
  }
  return result;
}

/**
 * Posts the stored payload, whatever its `ChatFormat`, as the JSON body through the incoming-webhook client
 * (which sends it as given), adding the idempotency key and reading `Retry-After` from the answer.
 */
async function post(url: string, message: OutboxMessage, timeoutMs: number, now: () => Date): Promise<PostOutcome> {
  let retryAfter: string | null = null;
  const webhook = new IncomingWebhook(url, {
    timeout: timeoutMs,
    fetch: async (target, init) => {
      // The header value is a structured-field string (RFC 8941), hence the quotes.
      const response = await fetch(target, { ...init, headers: { ...init?.headers, 'Idempotency-Key': `"${message.idempotencyKey}"` } });
      retryAfter = response.headers.get('retry-after');
      return response;
    },
  });
  const scrub = (text: string) => text.replaceAll(url, '[webhook]').slice(0, 500);
  try {
    await webhook.send(message.payload);
    return { ok: true };
  } catch (error) {
    if (error instanceof IncomingWebhookHTTPError) {
      const status = error.statusCode;
      const described = scrub(`HTTP ${status} ${error.statusMessage}: ${error.body}`);
      if (status === 429) {
        const retryAfterMs = parseRetryAfter(retryAfter, now());
        return { ok: false, error: described, permanent: false, ...(retryAfterMs !== undefined ? { retryAfterMs } : {}) };
      }
      return { ok: false, error: described, permanent: status >= 400 && status < 500 && status !== 408 };
    }
    if (error instanceof IncomingWebhookRequestError) {
      const original = error.original;
      const reason = original.name === 'TimeoutError' ? `no answer within ${timeoutMs} ms` : `${original.message}${original.cause instanceof Error ? `: ${original.cause.message}` : ''}`;
      return { ok: false, error: scrub(`request failed: ${reason}`), permanent: false };
    }
    throw error;
  }
}

/** The demo's delivery: one JSON file per message, named by outbox id so a rewrite after a crash replaces the same file. */
async function writeToFolder(folder: string, message: OutboxMessage): Promise<PostOutcome> {
  await mkdir(folder, { recursive: true });
  const file = join(folder, `${String(message.id).padStart(6, '0')}-${message.incidentId ?? 'all'}-${message.event}.json`);
  const body = { idempotencyKey: message.idempotencyKey, incident: message.incidentId, event: message.event, day: message.day, payload: message.payload };
  await writeFile(`${file}.tmp`, `${JSON.stringify(body, null, 2)}\n`);
  await rename(`${file}.tmp`, file);
  return { ok: true, file };
}
