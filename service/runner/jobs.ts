import { buildDigests, sendDigests } from '../delivery/digest.js';
import { defaultWeek } from '../delivery/digest-data.js';
import { UnrecordedOutcomes, drainOutbox } from '../delivery/sender.js';
import type { Metrics } from '../metrics.js';
import type { DeliverJob, DigestJob } from './runner.js';

/**
 * The delivery work `plumbline serve` schedules, counted in the metrics here
 * (the senders themselves also serve the one-shot CLI, which has no /metrics).
 */

/** Answers of posts this process made that the state database has not recorded yet: every drain of the process shares them. */
const unrecorded = new UnrecordedOutcomes();

/**
 * Sends the chat messages that are due. Safe on every replica at once: each
 * message is claimed with `for update skip locked` before it is posted.
 */
export function chatDelivery(metrics: Metrics): DeliverJob {
  return async (rt, { log }) => {
    const result = await drainOutbox(rt, { until: 'idle', unrecorded });
    metrics.deliveries.inc({ channel: 'chat', outcome: 'sent' }, result.sent);
    metrics.deliveries.inc({ channel: 'chat', outcome: 'failed' }, result.failures - result.parked);
    metrics.deliveries.inc({ channel: 'chat', outcome: 'parked' }, result.parked);
    if (result.sent + result.failures > 0) log.info({ sent: result.sent, failures: result.failures, parked: result.parked }, 'chat outbox drained');
  };
}

/**
 * The weekly digest of the last full week judged, for every owner. A digest
 * already sent for (week, owner) is not sent again (digest_sends); one that
 * failed fails the pass, so it is logged and recorded, and the runner tries
 * the slot again with backoff (or it can be sent by hand).
 */
export function weeklyDigest(metrics: Metrics): DigestJob {
  return async (rt, { now, log }) => {
    const week = await defaultWeek(rt, now);
    const outcomes = await sendDigests(rt, await buildDigests(rt, { week }));
    for (const outcome of outcomes) {
      if (outcome.status === 'sent' || outcome.status === 'written') metrics.deliveries.inc({ channel: 'email', outcome: 'sent' });
      if (outcome.status === 'failed') metrics.deliveries.inc({ channel: 'email', outcome: 'failed' });
    }
    log.info({ week, owners: outcomes.map(({ owner, status }) => ({ owner, status })) }, 'weekly digest');
    const failed = outcomes.filter((outcome) => outcome.status === 'failed').map((outcome) => outcome.owner);
    if (failed.length > 0) throw new Error(`the digest of the week of ${week} was not sent to ${failed.join(', ')}; \`plumbline digest --send --week ${week}\` retries`);
  };
}
