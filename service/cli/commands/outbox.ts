import { OUTBOX_STATES, listOutbox, outboxCounts, requeue, type OutboxMessage } from '../../delivery/outbox.js';
import { drainOutbox } from '../../delivery/sender.js';
import type { Runtime } from '../../runtime.js';
import { EXIT, ExitError } from '../exit-codes.js';
import { printOut } from '../terminal.js';

export interface OutboxCommandOptions {
  retry?: number;
  send?: boolean;
  all?: boolean;
  json?: boolean;
}

function describe(message: OutboxMessage): string {
  const when =
    message.state === 'parked'
      ? `parked ${message.parkedAt?.toISOString() ?? ''}`
      : message.state === 'sent'
        ? `sent ${message.sentAt?.toISOString() ?? ''}`
        : `next attempt ${message.nextAttemptAt.toISOString()}`;
  const lines = [`#${message.id} ${message.state.padEnd(11)} attempts ${message.attempts}  ${when}`, `    ${message.summary}`];
  if (message.lastError !== null && message.state !== 'sent') lines.push(`    last error: ${message.lastError}`);
  return lines.join('\n');
}

/**
 * `plumbline outbox`: lists the chat messages not yet delivered (parked ones
 * with their last error), `--retry ID` queues a parked or unconfirmed message again, `--send`
 * delivers what is due now. Exit codes: 0 done; 4 `--send` parked a message;
 * 64 wrong usage (such as no parked or unconfirmed message with that id).
 */
export async function outboxCommand(rt: Runtime, options: OutboxCommandOptions): Promise<number> {
  if (options.retry !== undefined) {
    if (!(await requeue(rt.state, rt.stateSchema, options.retry, new Date()))) throw new ExitError(EXIT.usage, `no parked or unconfirmed message #${options.retry} (see \`plumbline outbox\`)`);
    console.log(`message #${options.retry} is queued again`);
  }
  let code: number = EXIT.ok;
  if (options.send) {
    const result = await drainOutbox(rt, { until: 'idle' });
    const where = result.folder !== undefined ? ` (no webhook configured: payloads written to ${result.folder})` : '';
    console.log(`delivered ${result.sent}, failed attempts ${result.failures}, parked ${result.parked}${where}`);
    for (const file of result.files) console.log(`  ${file}`);
    if (result.parked > 0) code = EXIT.failed;
  }
  const states = options.all ? OUTBOX_STATES : OUTBOX_STATES.filter((state) => state !== 'sent');
  const messages = await listOutbox(rt.state, rt.stateSchema, states);
  const counts = await outboxCounts(rt.state, rt.stateSchema);
  if (options.json) {
    printOut(JSON.stringify({ counts, messages }, null, 2), { json: true });
  } else {
    console.log(`outbox: ${OUTBOX_STATES.map((state) => `${counts[state]} ${state}`).join(', ')}`);
    for (const message of messages) printOut(describe(message));
    if (counts.parked > 0) console.log('parked messages wait for a person: fix the cause, then `plumbline outbox --retry ID`');
    if (counts.unconfirmed > 0) console.log('unconfirmed messages may have been shown: look in the channel, then `plumbline outbox --retry ID` those missing');
  }
  return code;
}
