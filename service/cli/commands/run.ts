import { runDay } from '../../pipeline/run-day.js';
import { runRange } from '../../pipeline/run-range.js';
import { Claim } from '../../runner/claim.js';
import { lockName } from '../../runner/queries.js';
import type { Runtime } from '../../runtime.js';
import { EXIT, ExitError } from '../exit-codes.js';
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

