/**
 * The transactional outbox: messages are queued in the same transaction as the
 * incident change that causes them, then a sender claims, posts and
 * acknowledges them one by one. States: pending -> sending -> sent, or parked
 * after too many failures, or unconfirmed when a sender stopped between post
 * and acknowledgement and the target may not deduplicate (both wait for a
 * person to requeue them).
 *
 * Leases are read and set on database time, so replicas with drifting clocks
 * agree on when a sender is presumed dead. Backoff and `Retry-After` pauses
 * are on the sender's clock (injected in tests), as they are per message.
 */
import type pg from 'pg';
import { quoteIdent, type Db } from '../db/sql.js';
import type { IncidentEvent } from '../incidents/types.js';
import type { ChatPayload } from './chat.js';

/** Every state of an outbox message, in the order the CLI and the status page list them. */
export const OUTBOX_STATES = ['pending', 'sending', 'sent', 'parked', 'unconfirmed'] as const;
export type OutboxState = (typeof OUTBOX_STATES)[number];
/** States that need a person: `plumbline outbox --retry ID` queues them again. */
export const STUCK_STATES: readonly OutboxState[] = ['parked', 'unconfirmed'];

/** Why a message became unconfirmed (shown with it). */
export const UNCONFIRMED_ERROR =
  'the sender stopped between posting and recording the answer; the message may have been shown, so it is not posted again on its own';
/** What a message announces: an incident event, or the one summary of a backfill (no incident). */
export type OutboxEvent = IncidentEvent | 'backfill';

export interface OutboxMessage {
  id: number;
  channel: 'chat';
  /** Null for a backfill's summary. */
  incidentId: string | null;
  event: OutboxEvent;
  day: string;
  idempotencyKey: string;
  payload: ChatPayload;
  summary: string;
  state: OutboxState;
  attempts: number;
  nextAttemptAt: Date;
  leaseUntil: Date | null;
  claimedBy: string | null;
  lastError: string | null;
  createdAt: Date;
  sentAt: Date | null;
  parkedAt: Date | null;
}

const columns = (alias = '') => `${alias}id::int as id, channel, incident_id as "incidentId", event, to_char(day, 'YYYY-MM-DD') as day, idempotency_key as "idempotencyKey",
  payload, summary, state, attempts, next_attempt_at as "nextAttemptAt", lease_until as "leaseUntil", claimed_by as "claimedBy",
  last_error as "lastError", created_at as "createdAt", sent_at as "sentAt", parked_at as "parkedAt"`;
const COLUMNS = columns();

/** Stable per (incident, event, day): the same on every retry, after a restart, and on any replica. */
export function idempotencyKey(incidentId: string, event: IncidentEvent, day: string): string {
  return `plumbline.${incidentId}.${event}.${day}`;
}

/** Queues a chat message unless one exists for (incident, event, day); returns whether it was added. */
export async function enqueueChat(
  client: pg.ClientBase,
  schema: string,
  message: { incidentId: string; event: IncidentEvent; day: string; payload: ChatPayload; summary: string },
  now: Date,
): Promise<boolean> {
  const { rowCount } = await client.query({
    text: `insert into ${quoteIdent(schema)}.outbox (channel, incident_id, event, day, idempotency_key, payload, summary, next_attempt_at, created_at)
      values ('chat', $1, $2, $3, $4, $5, $6, $7, $7)
      on conflict (incident_id, event, day) do nothing`,
    values: [
      message.incidentId,
      message.event,
      message.day,
      idempotencyKey(message.incidentId, message.event, message.day),
      JSON.stringify(message.payload),
      message.summary,
      now,
    ],
  });
  return rowCount === 1;
}

/** Queues the summary of a backfill judged without messages, once per range; returns whether it was added. */
export async function enqueueBackfillSummary(
  client: pg.ClientBase,
  schema: string,
  message: { from: string; to: string; payload: ChatPayload; summary: string },
  now: Date,
): Promise<boolean> {
  const { rowCount } = await client.query({
    text: `insert into ${quoteIdent(schema)}.outbox (channel, incident_id, event, day, idempotency_key, payload, summary, next_attempt_at, created_at)
      values ('chat', null, 'backfill', $1, $2, $3, $4, $5, $5)
      on conflict (idempotency_key) do nothing`,
    values: [message.to, `plumbline.backfill.${message.from}.${message.to}`, JSON.stringify(message.payload), message.summary, now],
  });
  return rowCount === 1;
}

/** Withdraws messages of an incident event that nobody has tried to send yet (a rerun changed its mind). */
export async function withdrawPending(client: pg.ClientBase, schema: string, incidentId: string, event: IncidentEvent): Promise<void> {
  await client.query({
    text: `delete from ${quoteIdent(schema)}.outbox where incident_id = $1 and event = $2 and state = 'pending' and attempts = 0`,
    values: [incidentId, event],
  });
}

/**
 * Claims the oldest due chat message (several senders may run: `skip locked`
 * lets each take a different one). A message waits while an earlier message
 * of the same incident or an earlier backfill summary is unsent, so "resolved"
 * never overtakes "opened" and a backfill's summary comes first, and
 * while the channel is paused by a receiver's `Retry-After`. A `sending`
 * message whose lease has passed (database time) was left by a sender that
 * died: it is claimed again, keeping its idempotency key, only when
 * `repostExpired` (the target deduplicates by that key); otherwise
 * `settleExpiredLeases` has made it unconfirmed. A message never tried is due
 * at once, whatever clock queued it (replays queue with the replayed day's
 * clock). The attempt is counted here, before the post, so a crash mid-post
 * still counts.
 */
export async function claimNext(
  pool: pg.Pool,
  schema: string,
  now: Date,
  leaseMs: number,
  runner: string,
  repostExpired = true,
): Promise<OutboxMessage | undefined> {
  const s = quoteIdent(schema);
  const { rows } = await pool.query<OutboxMessage>({
    text: `with next as (
        select o.id from ${s}.outbox o
        where o.channel = 'chat'
          and ((o.state = 'pending' and (o.attempts = 0 or o.next_attempt_at <= $1)) or (o.state = 'sending' and $4 and o.lease_until <= now()))
          and not exists (
            select 1 from ${s}.outbox e where (e.incident_id = o.incident_id or e.incident_id is null) and e.id < o.id and e.state in ('pending', 'sending'))
          and not exists (select 1 from ${s}.channel_pauses p where p.channel = o.channel and p.until > $1)
        order by o.id
        limit 1
        for update of o skip locked)
      update ${s}.outbox o set state = 'sending', attempts = o.attempts + 1, lease_until = now() + make_interval(secs => $2), claimed_by = $3
      from next where o.id = next.id
      returning ${columns('o.')}`,
    values: [now, leaseMs / 1000, runner, repostExpired],
  });
  return rows[0];
}

/** `sending` messages whose lease passed (database time) become unconfirmed; returns their ids. */
export async function settleExpiredLeases(pool: pg.Pool, schema: string): Promise<number[]> {
  const { rows } = await pool.query<{ id: number }>({
    text: `update ${quoteIdent(schema)}.outbox set state = 'unconfirmed', lease_until = null, last_error = $1
      where channel = 'chat' and state = 'sending' and lease_until <= now()
      returning id::int as id`,
    values: [UNCONFIRMED_ERROR],
  });
  return rows.map((row) => row.id);
}

/** Nothing is posted to the chat channel before `until` (a receiver's `Retry-After`); an existing later pause stays. */
export async function pauseChannel(pool: pg.Pool, schema: string, until: Date, reason: string): Promise<void> {
  await pool.query({
    text: `insert into ${quoteIdent(schema)}.channel_pauses (channel, until, reason) values ('chat', $1, $2)
      on conflict (channel) do update set until = greatest(channel_pauses.until, excluded.until),
        reason = case when excluded.until > channel_pauses.until then excluded.reason else channel_pauses.reason end`,
    values: [until, reason],
  });
}

/** A late acknowledgement still counts when the message was meanwhile marked unconfirmed. */
export async function markSent(pool: pg.Pool, schema: string, id: number, now: Date): Promise<void> {
  await pool.query({
    text: `update ${quoteIdent(schema)}.outbox set state = 'sent', sent_at = $2, lease_until = null, last_error = null
      where id = $1 and state in ('sending', 'unconfirmed')`,
    values: [id, now],
  });
}

/** Records a failed attempt: back to pending until `retryAt`, or parked. */
export async function markFailed(pool: pg.Pool, schema: string, id: number, error: string, outcome: { retryAt: Date } | { parkedAt: Date }): Promise<void> {
  const parked = 'parkedAt' in outcome;
  await pool.query({
    text: `update ${quoteIdent(schema)}.outbox
      set state = $2, last_error = $3, lease_until = null, next_attempt_at = coalesce($4, next_attempt_at), parked_at = $5
      where id = $1 and state = 'sending'`,
    values: [id, parked ? 'parked' : 'pending', error, parked ? null : outcome.retryAt, parked ? outcome.parkedAt : null],
  });
}

/**
 * When the next unsent chat message becomes claimable (leaving out those
 * queued behind an earlier one, and not before a channel pause ends), if any
 * is left. A message another sender holds counts as due now: the caller polls
 * until that sender records its answer.
 */
export async function nextDue(pool: pg.Pool, schema: string, now: Date): Promise<Date | undefined> {
  const s = quoteIdent(schema);
  const { rows } = await pool.query<{ due: Date | null }>({
    text: `with due as (
        select min(case when o.state = 'sending' or o.attempts = 0 then $1 else o.next_attempt_at end) as at
        from ${s}.outbox o where o.channel = 'chat' and o.state in ('pending', 'sending')
          and not exists (select 1 from ${s}.outbox e where (e.incident_id = o.incident_id or e.incident_id is null) and e.id < o.id and e.state in ('pending', 'sending')))
      select case when due.at is null then null else greatest(due.at, (select p.until from ${s}.channel_pauses p where p.channel = 'chat')) end as due
      from due`,
    values: [now],
  });
  return rows[0]?.due ?? undefined;
}

/** Messages in the given states, oldest first (the CLI and the status page). */
export async function listOutbox(db: Db, schema: string, states: readonly OutboxState[], limit = 200): Promise<OutboxMessage[]> {
  const { rows } = await db.query<OutboxMessage>({
    text: `select ${COLUMNS} from ${quoteIdent(schema)}.outbox where state = any($1) order by id limit $2`,
    values: [states, limit],
  });
  return rows;
}

/** Counts per state (the status page). */
export async function outboxCounts(db: Db, schema: string): Promise<Record<OutboxState, number>> {
  const { rows } = await db.query<{ state: OutboxState; n: number }>(`select state, count(*)::int as n from ${quoteIdent(schema)}.outbox group by state`);
  const counts = Object.fromEntries(OUTBOX_STATES.map((state) => [state, 0])) as Record<OutboxState, number>;
  for (const row of rows) counts[row.state] = row.n;
  return counts;
}

/** Puts a parked or unconfirmed message back in the queue with a fresh count of attempts; false when no such message has that id. */
export async function requeue(db: Db, schema: string, id: number, now: Date): Promise<boolean> {
  const { rowCount } = await db.query({
    text: `update ${quoteIdent(schema)}.outbox set state = 'pending', attempts = 0, next_attempt_at = $2, parked_at = null
      where id = $1 and state = any($3)`,
    values: [id, now, STUCK_STATES],
  });
  return rowCount === 1;
}
