import type { Logger } from '../log.js';
import type { Scheduler } from '../scheduler/scheduler.js';
import type { Runner } from './runner.js';

/**
 * The scheduled side of a graceful stop: no new ticks, the pass in progress
 * ends after its current day, and if that takes longer than `graceMs` the pass
 * is marked abandoned (its days are rerun by the next pass of any replica). A
 * chat post cut short stays claimed until its lease passes, then is sent again
 * with the same idempotency key.
 */
export async function stopScheduledWork(schedulers: readonly Scheduler[], runner: Runner, graceMs: number, log: Logger): Promise<'finished' | 'abandoned'> {
  const running = schedulers.map((scheduler) => scheduler.running?.job).filter((job) => job !== undefined);
  log.info({ graceSeconds: graceMs / 1000, running }, 'stopping the schedule');
  runner.stop();
  let timer: NodeJS.Timeout | undefined;
  const expired = new Promise<false>((resolve) => {
    timer = setTimeout(() => resolve(false), graceMs);
  });
  const finished = await Promise.race([Promise.all(schedulers.map((scheduler) => scheduler.stop())).then(() => true), expired]);
  clearTimeout(timer);
  if (finished) return 'finished';
  await runner.abandon(`stopped before finishing: the shutdown grace period of ${graceMs / 1000} s ran out; rerun by the next pass`);
  return 'abandoned';
}
