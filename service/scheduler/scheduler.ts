import { schedule as cronSchedule, type Logger as CronLogger } from 'node-cron';
import type { Logger } from '../log.js';
import { metrics as processMetrics, type Metrics } from '../metrics.js';

export type TickReason = 'start' | 'schedule' | 'retry';

/** One request to run a job: from the cron schedule, the catch-up at start, or a periodic retry of failed or missed work. */
export interface Tick {
  job: string;
  reason: TickReason;
  /** The instant the tick fired (the injected clock for `start`). */
  at: Date;
}

export interface ScheduledJob {
  name: string;
  /** Five-field cron expression, read in the scheduler's timezone. */
  cron: string;
  run(tick: Tick): Promise<unknown>;
}

/** Fires `onTick` at every instant matching a cron expression in a timezone; node-cron in production. */
export interface CronDriver {
  schedule(entry: { name: string; expression: string; timezone: string; onTick: (at: Date) => void; log: Logger }): { stop(): void | Promise<void> };
}

export const nodeCronDriver: CronDriver = {
  schedule({ name, expression, timezone, onTick, log }) {
    // node-cron prints to the console by default; its notices (missed executions after a
    // suspended process, say) belong in our JSON log. Overlap is ours to manage: the callback only queues.
    const logger: CronLogger = {
      info: (message) => log.debug({ cron: name }, message),
      warn: (message) => log.warn({ cron: name }, message),
      error: (message, err) => log.error({ cron: name, err: err ?? message }, 'cron error'),
      debug: (message) => log.debug({ cron: name }, String(message)),
    };
    const task = cronSchedule(expression, (context) => onTick(context.date), { name, timezone, logger });
    return { stop: () => task.destroy() };
  },
};

export interface SchedulerOptions {
  timezone: string;
  jobs: readonly ScheduledJob[];
  log: Logger;
  metrics?: Metrics;
  driver?: CronDriver;
  /** The clock a manual tick is stamped with. */
  clock?: () => Date;
}

/**
 * Runs jobs on their cron schedules in the business timezone, one at a time in
 * this process. A tick for a job that is already running or queued is skipped
 * (and logged and counted): the next daily pass looks back over missed days
 * anyway. A tick for another job waits its turn, so the weekly digest never
 * reads a day that is still being judged and is never lost to a busy runner.
 */
export class Scheduler {
  private readonly jobs = new Map<string, ScheduledJob>();
  private readonly queue: Tick[] = [];
  private current: { tick: Tick; done: Promise<void> } | undefined;
  private tasks: Array<{ stop(): void | Promise<void> }> = [];
  private stopped = false;
  private readonly metrics: Metrics;
  private readonly clock: () => Date;

  constructor(private readonly options: SchedulerOptions) {
    for (const job of options.jobs) this.jobs.set(job.name, job);
    this.metrics = options.metrics ?? processMetrics;
    this.clock = options.clock ?? (() => new Date());
  }

  /** Starts every job's cron schedule. */
  start(): void {
    const driver = this.options.driver ?? nodeCronDriver;
    for (const job of this.jobs.values()) {
      this.tasks.push(
        driver.schedule({
          name: job.name,
          expression: job.cron,
          timezone: this.options.timezone,
          log: this.options.log,
          onTick: (at) => void this.trigger(job.name, 'schedule', at),
        }),
      );
      this.options.log.info({ job: job.name, cron: job.cron, timezone: this.options.timezone }, 'job scheduled');
    }
  }

  /** Queues a run of `job`; skipped while the same job is running or already queued, or once stopped. */
  trigger(job: string, reason: TickReason, at: Date = this.clock()): 'queued' | 'skipped' {
    if (!this.jobs.has(job)) throw new Error(`no scheduled job named ${job}`);
    const tick: Tick = { job, reason, at };
    if (this.stopped) {
      this.options.log.info({ job, reason, at }, 'shutting down: tick ignored');
      return 'skipped';
    }
    if (this.current?.tick.job === job || this.queue.some((queued) => queued.job === job)) {
      this.metrics.ticksSkipped.inc({ job });
      this.options.log.warn({ job, reason, at, runningSince: this.current?.tick.at }, 'the previous run of this job is still going: tick skipped');
      return 'skipped';
    }
    this.queue.push(tick);
    this.pump();
    return 'queued';
  }

  /** The job running now, if any. */
  get running(): Tick | undefined {
    return this.current?.tick;
  }

  /** Resolves once nothing is running or queued. */
  async idle(): Promise<void> {
    while (this.current) await this.current.done;
  }

  /** Stops the schedules and drops queued ticks; resolves when the run in progress has ended. */
  async stop(): Promise<void> {
    this.stopped = true;
    this.queue.length = 0;
    await Promise.all(this.tasks.map((task) => task.stop()));
    this.tasks = [];
    await this.idle();
  }

  private pump(): void {
    if (this.current || this.stopped) return;
    const tick = this.queue.shift();
    if (!tick) return;
    const job = this.jobs.get(tick.job)!;
    const done = (async () => {
      try {
        await job.run(tick);
      } catch (error) {
        // Jobs record their own failures; this only keeps a bug from stopping the schedule.
        this.options.log.error({ err: error, job: tick.job, reason: tick.reason }, 'scheduled job failed');
      }
    })().finally(() => {
      this.current = undefined;
      this.pump();
    });
    this.current = { tick, done };
  }
}
