/**
 * A child process of `npm run evaluate`: replays the seeds its parent sends,
 * one at a time, and sends back what plumbline stored. Two of them use both
 * cores of a small machine (each is mostly single-threaded JavaScript plus
 * the database's work).
 */
import { replayScenario, type ReplayOptions } from './replay.js';

export type WorkerRequest = { seed: number; options: Omit<ReplayOptions, 'log'> } | { stop: true };
export type WorkerReply = { seed: number; run?: Awaited<ReturnType<typeof replayScenario>>; error?: string } | { log: string };

process.on('message', (message: WorkerRequest) => {
  if ('stop' in message) {
    process.disconnect();
    return;
  }
  const send = (reply: WorkerReply) => process.send?.(reply);
  replayScenario(message.seed, { ...message.options, log: (line) => send({ log: line }) }).then(
    (run) => send({ seed: message.seed, run }),
    (error: Error) => send({ seed: message.seed, error: error.stack ?? error.message }),
  );
});
