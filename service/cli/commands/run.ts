import { daysBetween } from '../../config/definitions.js';
import { incidentPolicy } from '../../incidents/apply.js';
import { announceBackfill } from '../../delivery/backfill.js';
import { judgeDays, replayClock, rollupRange, runDay } from '../../pipeline/run-day.js';
import { Claim } from '../../runner/claim.js';
import { lockName } from '../../runner/queries.js';
import type { Runtime } from '../../runtime.js';
import { passWindow } from '../../scheduler/plan.js';
import { EXIT, ExitError } from '../exit-codes.js';
import { Progress } from '../progress.js';
import { PICTURE_DAYS, formatSummary, loadSummary } from '../summary.js';
import { printOut } from '../terminal.js';

export interface RunCommandOptions {
  date?: string;
  from?: string;
  to?: string;
  now?: string;
  announce?: boolean;
  json?: boolean;
  days?: number;
  findings?: boolean;
}

export interface RangeOptions {
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
  const client = await rt.state.connect();
  try {
    await client.query('begin');
    const flows = rt.flows.map((flow) => flow.id);
    const result = await announceBackfill(client, rt.stateSchema, flows, range, incidentPolicy(rt.config.main), now);
    await client.query('commit');
    rt.log.info({ ...range, ...result }, 'backfill judged without chat messages; its summary is queued');
  } catch (error) {
    await client.query('rollback');
    throw error;
  } finally {
    client.release();
  }
}

export async function runCommand(rt: Runtime, options: RunCommandOptions): Promise<number> {
  // The same claim as `serve`'s daily pass: a manual run waits for a pass in progress instead of judging beside it.
  const claim = await Claim.acquire(rt.claims, lockName(rt.stateSchema, 'daily'), {
    pollMs: 2000,
    signal: new AbortController().signal,
    onWait: () => console.error('plumbline: a daily pass is running elsewhere; waiting for it to finish'),
  });
  try {
    return await runClaimed(rt, options);
  } finally {
    await claim?.release();
  }
}

async function runClaimed(rt: Runtime, options: RunCommandOptions): Promise<number> {
  const valid = (day: string | undefined) => day === undefined || /^\d{4}-\d{2}-\d{2}$/.test(day);
  if (!valid(options.date) || !valid(options.from) || !valid(options.to)) throw new ExitError(EXIT.usage, 'dates are written YYYY-MM-DD');
  let from: string;
  let to: string;
  const now = options.now ? new Date(options.now) : new Date();
  if (Number.isNaN(now.getTime())) throw new ExitError(EXIT.usage, '--now must be an ISO timestamp');
  if (options.date) {
    if (options.from || options.to) throw new ExitError(EXIT.usage, 'use either --date or --from/--to');
    if (options.announce) throw new ExitError(EXIT.usage, '--announce goes with --from/--to: a daily run always announces');
    await runDay(rt, options.date, { now });
    from = options.date;
    to = options.date;
  } else if (options.from && options.to) {
    if (options.from > options.to) throw new ExitError(EXIT.usage, '--from must be on or before --to');
    from = options.from;
    to = options.to;
    await runRange(rt, from, to, { json: options.json ?? false, now, announce: options.announce ?? false });
  } else {
    throw new ExitError(EXIT.usage, 'give --date D, or --from D1 --to D2');
  }
  const summary = await loadSummary(rt, from, to);
  if (options.json) printOut(JSON.stringify(summary, null, 2), { json: true });
  else printOut(formatSummary(rt.flows, summary, { pictureDays: options.days ?? PICTURE_DAYS, allFindings: options.findings ?? false }));
  return EXIT.ok;
}

