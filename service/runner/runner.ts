import type { Logger } from '../log.js';
import { metrics as processMetrics, type Metrics } from '../metrics.js';
import { runDay, runnerName } from '../pipeline/run-day.js';
import type { Runtime } from '../runtime.js';
import { latestOccurrence } from '../scheduler/occurrence.js';
import { localDay, passWindow, planPass, type PassPlan, type StoredVerdict } from '../scheduler/plan.js';
import type { TickReason } from '../scheduler/scheduler.js';
import { Claim } from './claim.js';
import {
  DATABASE_NOW,
  abandonDeadPassesQuery,
  abandonPassQuery,
  digestSlotQuery,
  finishPassQuery,
  insertPassQuery,
  lastJudgedQuery,
  lockName,
  verdictsQuery,
  type RunnerJob,
} from './queries.js';

/**
 * Writes and sends the weekly digest. The runner calls it at most once per
 * slot (the local day it was due) across replicas, never two at a time, and
 * after the daily pass of that morning when both fall due together.
 */
export type DigestJob = (rt: Runtime, context: { now: Date; slot: string; log: Logger }) => Promise<void>;

/** Sends what judging queued (the chat outbox); must be safe to run on several replicas at once. */
export type DeliverJob = (rt: Runtime, context: { log: Logger }) => Promise<void>;

/** First wait before a failed digest is tried again; it doubles per failure of the slot. */
export const DIGEST_RETRY_BASE_MS = 5 * 60_000;
/** Longest wait between two tries of a failed digest. */
export const DIGEST_RETRY_CAP_MS = 4 * 3600_000;

/** Wait after the `failures`-th failure of a digest slot: 5 min, 10 min, 20 min, ... up to 4 h. */
export function digestRetryDelay(failures: number): number {
  return Math.min(DIGEST_RETRY_CAP_MS, DIGEST_RETRY_BASE_MS * 2 ** Math.max(failures - 1, 0));
}

export interface RunnerOptions {
  metrics?: Metrics;
  /** The clock passes decide and judge by; database time by default, so replicas agree. */
  clock?: () => Date | Promise<Date>;
  /** A `not_ready` verdict younger than this is not tried again (default one hour). */
  recheckAfterSeconds?: number;
  /** How often a replica waiting for another's claim tries again (default 5 s). */
  claimPollMs?: number;
  digest?: DigestJob;
  /** Called after each day of a daily pass, so the day's messages leave at once, not a whole catch-up later. */
  deliver?: DeliverJob;
}

export interface PassReport {
  job: RunnerJob;
  /** `skipped`: stopped while waiting for the claim, or the digest was already sent by a replica. */
  status: 'done' | 'failed' | 'abandoned' | 'skipped';
  passId?: string;
  /** Business days run to the end, oldest first. */
  days: string[];
  plan?: PassPlan;
  error?: string;
}

/**
 * Runs the scheduled work of `plumbline serve` so that any number of replicas
 * against one state schema act as one runner: each pass first claims its job
 * (a session advisory lock, see Claim), then decides from the stored verdicts,
 * under the claim, which days are still due. A replica that finds the claim
 * taken waits, then finds the days judged and does nothing; if the holder dies,
 * the waiting replica takes over and reruns the unfinished days (runDay is
 * idempotent per day). Messages are deduplicated by the outbox, not here.
 */
export class Runner {
  private readonly metrics: Metrics;
  private readonly log: Logger;
  private readonly name = runnerName();
  private readonly stopping = new AbortController();
  private active: { job: RunnerJob; passId: string } | undefined;
  private dailyEnded = false;

  constructor(
    readonly rt: Runtime,
    private readonly options: RunnerOptions = {},
  ) {
    this.metrics = options.metrics ?? processMetrics;
    this.log = rt.log.child({ runner: this.name });
  }

  /** True once a daily pass of this process has ended, whatever its outcome (readiness waits for the catch-up at start). */
  get firstDailyPassEnded(): boolean {
    return this.dailyEnded;
  }

  /**
   * Runs every due business day in order (see planPass): the day that ended
   * last night once it has settled, plus missed and not-ready days of the
   * catch-up window. Stops after the current day when `stop()` is called.
   */
  async daily(reason: TickReason): Promise<PassReport> {
    try {
      return await this.withClaim('daily', async (claim) => {
        const started = performance.now();
        const plan = await this.plan(await this.now());
        const pass = await this.openPass('daily', plan.latest, reason, plan.due);
        const log = this.log.child({ run: pass, job: 'daily' });
        if (plan.leftBehind) {
          const { from, to } = plan.leftBehind;
          log.warn({ from, to }, `days before the catch-up window were never judged; run \`plumbline run --from ${from} --to ${to}\``);
        }
        log.info({ reason, latest: plan.latest, due: plan.due }, plan.due.length > 0 ? 'daily pass started' : 'daily pass: every day is judged');
        const days: string[] = [];
        try {
          for (const day of plan.due) {
            if (this.stopping.signal.aborted) {
              log.warn({ left: plan.due.slice(days.length) }, 'shutting down: the remaining days are left to the next pass');
              await this.closePass('daily', pass, 'abandoned', days, undefined, started, log);
              return { job: 'daily', status: 'abandoned', passId: pass, days, plan };
            }
            if (claim.lost) throw new Error(`lost the claim on the daily pass: ${claim.lost.message}`);
            await this.runOneDay(day, log.child({ day }));
            days.push(day);
            await this.deliver(log.child({ day }));
          }
        } catch (error) {
          await this.closePass('daily', pass, 'failed', days, error as Error, started, log);
          return { job: 'daily', status: 'failed', passId: pass, days, plan, error: (error as Error).message };
        }
        await this.closePass('daily', pass, 'done', days, undefined, started, log);
        return { job: 'daily', status: 'done', passId: pass, days, plan };
      });
    } catch (error) {
      return this.failedOutsidePass('daily', error as Error);
    } finally {
      this.dailyEnded = true;
    }
  }

  /**
   * Runs the digest job once per slot across replicas. A scheduled tick's slot
   * is today; a `start` or `retry` tick looks for the latest slot of
   * `schedule.weekly_digest` in the past week and runs it if no replica sent
   * it yet (missed while down) and the backoff after its last failure has
   * passed (a failed digest, say SMTP down, is retried within the hour
   * rather than a week later).
   */
  async digest(reason: TickReason): Promise<PassReport> {
    const digest = this.options.digest;
    if (!digest) throw new Error('no digest job was given to this runner');
    try {
      return await this.withClaim('digest', async () => {
        const started = performance.now();
        const now = await this.now();
        let slot = localDay(now, this.rt.timezone);
        if (reason !== 'schedule') {
          const due = latestOccurrence(this.rt.config.main.schedule.weekly_digest, this.rt.timezone, now, 7);
          if (due === undefined) return { job: 'digest', status: 'skipped', days: [] };
          slot = localDay(due, this.rt.timezone);
        }
        const { rows } = await this.rt.state.query<{ done: boolean; failures: number; failedAgo: number | null }>(digestSlotQuery(this.rt.stateSchema, slot));
        const state = rows[0]!;
        if (state.done) {
          if (reason === 'schedule') {
            this.metrics.claims.inc({ job: 'digest', outcome: 'already_done' });
            this.log.info({ job: 'digest', slot }, 'the digest of this slot was already sent by a replica');
          }
          return { job: 'digest', status: 'skipped', days: [] };
        }
        if (reason !== 'schedule' && state.failures > 0 && state.failedAgo !== null && state.failedAgo * 1000 < digestRetryDelay(state.failures)) {
          return { job: 'digest', status: 'skipped', days: [] };
        }
        const pass = await this.openPass('digest', slot, reason, []);
        const log = this.log.child({ run: pass, job: 'digest', slot });
        log.info({ reason, failures: state.failures }, reason === 'schedule' ? 'digest started' : 'digest of a missed or failed slot started');
        try {
          await digest(this.rt, { now, slot, log });
        } catch (error) {
          await this.closePass('digest', pass, 'failed', [], error as Error, started, log);
          log.warn({ retryInSeconds: digestRetryDelay(state.failures + 1) / 1000 }, 'the digest will be tried again');
          return { job: 'digest', status: 'failed', passId: pass, days: [], error: (error as Error).message };
        }
        await this.closePass('digest', pass, 'done', [], undefined, started, log);
        return { job: 'digest', status: 'done', passId: pass, days: [] };
      });
    } catch (error) {
      return this.failedOutsidePass('digest', error as Error);
    }
  }

  /** Asks the pass in progress to end after its current day, and stops waiting for claims. */
  stop(): void {
    this.stopping.abort();
  }

  /**
   * Marks the pass in progress, and the `runs` rows it left unfinished, as
   * abandoned: called when the shutdown grace period ran out. Its days are
   * rerun by the next pass of any replica.
   */
  async abandon(reason: string): Promise<void> {
    const active = this.active;
    if (!active) return;
    const { rows } = await this.rt.state.query<{ passes: number; runs: number }>(abandonPassQuery(this.rt.stateSchema, active.passId, this.name, reason));
    if (rows[0]!.passes > 0) {
      this.metrics.runs.inc({ kind: active.job, status: 'abandoned' });
      this.log.warn({ run: active.passId, job: active.job, runs: rows[0]!.runs }, 'pass abandoned: its days will be run again');
    }
  }

  private async withClaim(job: RunnerJob, work: (claim: Claim) => Promise<PassReport>): Promise<PassReport> {
    const claim = await Claim.acquire(this.rt.claims, lockName(this.rt.stateSchema, job), {
      pollMs: this.options.claimPollMs ?? 5000,
      signal: this.stopping.signal,
      onWait: () => {
        this.metrics.claims.inc({ job, outcome: 'waited' });
        this.log.info({ job }, 'another replica holds this job: waiting for it to finish');
      },
    });
    if (!claim) return { job, status: 'skipped', days: [] };
    this.metrics.claims.inc({ job, outcome: 'claimed' });
    try {
      const { rows } = await this.rt.state.query<{ passes: number; runs: number }>(abandonDeadPassesQuery(this.rt.stateSchema, job));
      if (rows[0]!.passes > 0) this.log.warn({ job, ...rows[0] }, 'found passes of a runner that died: marked abandoned, their days run again');
      return await work(claim);
    } finally {
      this.active = undefined;
      await claim.release();
    }
  }

  private async now(): Promise<Date> {
    if (this.options.clock) return await this.options.clock();
    const { rows } = await this.rt.state.query<{ now: Date }>(DATABASE_NOW);
    return rows[0]!.now;
  }

  private async plan(now: Date): Promise<PassPlan> {
    const input = {
      now,
      timezone: this.rt.timezone,
      settleSeconds: this.rt.config.main.judging.settle_time,
      catchUpDays: this.rt.config.main.schedule.catch_up_days,
    };
    const { latest, windowStart } = passWindow(input);
    const [{ rows: verdicts }, { rows: last }] = await Promise.all([
      this.rt.state.query<StoredVerdict>(verdictsQuery(this.rt.stateSchema, windowStart, latest, this.options.recheckAfterSeconds ?? 3600)),
      this.rt.state.query<{ day: string | null }>(lastJudgedQuery(this.rt.stateSchema, latest)),
    ]);
    return planPass({ ...input, flows: this.rt.flows.map((flow) => flow.id), verdicts, lastJudged: last[0]!.day });
  }

  private async runOneDay(day: string, log: Logger): Promise<void> {
    const started = performance.now();
    try {
      const result = await runDay(this.rt, day, { now: await this.now() });
      if (result.restated.length > 0) log.info({ restated: result.restated }, 'late rows: earlier days rolled up again');
      for (const judgement of result.judgements) {
        for (const finding of judgement.findings) {
          this.metrics.findings.inc({ check: finding.check, severity: finding.severity, muted: String(finding.muted !== undefined) });
        }
        log.info(
          { flow: judgement.flow, verdict: judgement.verdict, reason: judgement.reason, findings: judgement.findings.length },
          judgement.verdict === 'judged' ? 'flow judged' : 'flow not ready: tried again by a later pass',
        );
      }
      this.observe('day', 'done', started);
    } catch (error) {
      this.observe('day', 'failed', started);
      log.error({ err: error }, 'day failed: the pass stops here, later days wait for it');
      throw error;
    }
  }

  private async openPass(job: RunnerJob, slot: string, reason: TickReason, days: string[]): Promise<string> {
    const { rows } = await this.rt.state.query<{ id: string }>(insertPassQuery(this.rt.stateSchema, { job, slot, reason, runner: this.name, days }));
    this.active = { job, passId: rows[0]!.id };
    return rows[0]!.id;
  }

  private async closePass(
    job: RunnerJob,
    id: string,
    status: 'done' | 'failed' | 'abandoned',
    days: string[],
    error: Error | undefined,
    started: number,
    log: Logger,
  ): Promise<void> {
    const { rowCount } = await this.rt.state.query(finishPassQuery(this.rt.stateSchema, id, status, days, error?.message ?? null));
    // Zero rows: the pass was already marked abandoned, by this runner's shutdown or by the replica that took over its claim.
    if (rowCount === 0) return;
    this.observe(job, status, started);
    if (status === 'failed') log.error({ err: error, days }, `${job} pass failed`);
    else log.info({ status, days, seconds: Math.round((performance.now() - started) / 100) / 10 }, `${job} pass ended`);
  }

  /** A delivery failure does not fail the day: its messages stay queued and the periodic delivery retries them. */
  private async deliver(log: Logger): Promise<void> {
    if (!this.options.deliver) return;
    try {
      await this.options.deliver(this.rt, { log });
    } catch (error) {
      log.error({ err: error }, 'delivery after judging failed; the messages stay queued');
    }
  }

  /** A failure before a pass row could be written (the state database is down, say): logged and counted, never silent. */
  private failedOutsidePass(job: RunnerJob, error: Error): PassReport {
    this.metrics.runs.inc({ kind: job, status: 'failed' });
    this.log.error({ err: error, job }, `${job} pass could not start`);
    return { job, status: 'failed', days: [], error: error.message };
  }

  private observe(kind: RunnerJob | 'day', status: 'done' | 'failed' | 'abandoned', started: number): void {
    this.metrics.runs.inc({ kind, status });
    this.metrics.runDuration.observe({ kind }, (performance.now() - started) / 1000);
  }
}
