/**
 * A range of days replayed as the daily runs would have judged them: `run
 * --from/--to`, the demo and the evaluation's install all come through here.
 */
import { daysBetween } from '../config/definitions.js';
import { withTransaction } from '../db/tx.js';
import { announceBackfill } from '../delivery/backfill.js';
import { incidentPolicy } from '../incidents/apply.js';
import { Progress } from '../progress.js';
import type { Runtime } from '../runtime.js';
import { passWindow } from '../scheduler/plan.js';
import { judgeDays, replayClock, rollupRange } from './run-day.js';

export interface RangeOptions {
  /** Output read by machines: no progress lines on stderr. */
  json?: boolean;
  /** Judge from this day on (earlier days are only rolled up). */
  judgeFrom?: string;
  /** The clock that places the catch-up window (the real one by default). */
  now?: Date;
  /** Queue every day's messages, as the daily runs would have, instead of one summary. */
  announce?: boolean;
}

/**
 * Rolls up every day of the range (in parallel), then judges them in order so
 * baselines build up. Days older than the catch-up window are judged without
 * chat messages and summed up in one (delivery/backfill.ts), unless `announce`;
 * the days of the window speak as the daily pass would.
 */
export async function runRange(rt: Runtime, from: string, to: string, options: RangeOptions): Promise<void> {
  const days = daysBetween(from, to);
  const rollups = new Progress('rollup', !options.json);
  await rollupRange(rt, days, { onProgress: (done, total, label) => rollups.update(done, total, label) });
  const judged = days.filter((day) => day >= (options.judgeFrom ?? from));
  const judging = new Progress('judge ', !options.json);
  const now = options.now ?? new Date();
  const { windowStart } = passWindow({ now, timezone: rt.timezone, settleSeconds: rt.config.main.judging.settle_time, catchUpDays: rt.config.main.schedule.catch_up_days });
  const quiet = options.announce ? [] : judged.filter((day) => day < windowStart);
  if (quiet.length > 0) {
    await judgeDays(rt, quiet, replayClock(rt), undefined, { quiet: true });
    await summariseBackfill(rt, { from: quiet[0]!, to: quiet[quiet.length - 1]! }, now);
  }
  await judgeDays(rt, judged.slice(quiet.length), replayClock(rt));
  judging.update(judged.length, judged.length);
}

async function summariseBackfill(rt: Runtime, range: { from: string; to: string }, now: Date): Promise<void> {
  const flows = rt.flows.map((flow) => flow.id);
  const result = await withTransaction(rt.state, (client) => announceBackfill(client, rt.stateSchema, flows, range, incidentPolicy(rt.config.main), now));
  rt.log.info({ ...range, ...result }, 'backfill judged without chat messages; its summary is queued');
}
