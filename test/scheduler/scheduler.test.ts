/**
 * The scheduler's lane with a hand-driven cron: a tick runs its job, a tick of
 * a job still running is skipped (logged and counted), another job waits its
 * turn, and stop() drops what is queued and waits for the run in progress.
 */
import { describe, expect, it } from 'vitest';
import { createMetrics } from '../../service/metrics.js';
import { Scheduler, nodeCronDriver, type Tick } from '../../service/scheduler/scheduler.js';
import { HandCron, memoryLog } from './helpers.js';

/** A job whose runs the test releases one by one. */
function gatedJob(name: string, cron: string) {
  const runs: Tick[] = [];
  const gates: Array<() => void> = [];
  return {
    runs,
    release: () => gates.shift()?.(),
    job: {
      name,
      cron,
      run: (tick: Tick) => {
        runs.push(tick);
        return new Promise<void>((resolve) => gates.push(resolve));
      },
    },
  };
}

const settle = () => new Promise((resolve) => setImmediate(resolve));

describe('Scheduler', () => {
  it('registers each job with its cron expression in the business timezone, and a tick runs the job', async () => {
    const cron = new HandCron();
    const daily = gatedJob('daily', '30 6 * * *');
    const { log } = memoryLog();
    const scheduler = new Scheduler({ timezone: 'America/New_York', jobs: [daily.job], log, driver: cron, metrics: createMetrics() });
    scheduler.start();
    expect(cron.entries.get('daily')).toMatchObject({ expression: '30 6 * * *', timezone: 'America/New_York' });

    const at = new Date('2026-12-01T11:30:00Z');
    cron.fire('daily', at);
    await settle();
    expect(daily.runs).toEqual([{ job: 'daily', reason: 'schedule', at }]);
    daily.release();
    await scheduler.idle();
    expect(scheduler.running).toBeUndefined();
  });

  it('skips a tick while the same job is still running, logs and counts it, then runs the next one', async () => {
    const cron = new HandCron();
    const daily = gatedJob('daily', '30 6 * * *');
    const { log, lines } = memoryLog();
    const metrics = createMetrics();
    const clock = () => new Date('2026-12-01T07:00:00Z');
    const scheduler = new Scheduler({ timezone: 'America/New_York', jobs: [daily.job], log, driver: cron, metrics, clock });
    scheduler.start();

    expect(scheduler.trigger('daily', 'start')).toBe('queued');
    await settle();
    expect(daily.runs).toEqual([{ job: 'daily', reason: 'start', at: clock() }]);
    cron.fire('daily', new Date('2026-12-01T11:30:00Z')); // the catch-up at start is still going
    await settle();
    expect(daily.runs).toHaveLength(1);
    expect(lines.some((line) => line.job === 'daily' && String(line.msg).includes('tick skipped'))).toBe(true);
    const skipped = await metrics.registry.getSingleMetric('plumbline_ticks_skipped_total')!.get();
    expect(skipped.values).toEqual([{ value: 1, labels: { job: 'daily' } }]);

    daily.release();
    await scheduler.idle();
    cron.fire('daily', new Date('2026-12-02T11:30:00Z'));
    await settle();
    expect(daily.runs.map((tick) => tick.reason)).toEqual(['start', 'schedule']);
    daily.release();
    await scheduler.idle();
  });

  it('queues another job behind the running one instead of dropping it', async () => {
    const cron = new HandCron();
    const daily = gatedJob('daily', '30 6 * * *');
    const digest = gatedJob('digest', '0 8 * * 1');
    const scheduler = new Scheduler({ timezone: 'America/New_York', jobs: [daily.job, digest.job], log: memoryLog().log, driver: cron, metrics: createMetrics() });
    scheduler.start();
    cron.fire('daily', new Date('2026-11-30T11:30:00Z'));
    cron.fire('digest', new Date('2026-11-30T13:00:00Z'));
    await settle();
    expect(scheduler.running?.job).toBe('daily');
    expect(digest.runs).toHaveLength(0);
    daily.release();
    await settle();
    await settle();
    expect(scheduler.running?.job).toBe('digest');
    expect(digest.runs).toHaveLength(1);
    digest.release();
    await scheduler.idle();
  });

  it('keeps scheduling after a job throws', async () => {
    const cron = new HandCron();
    let calls = 0;
    const { log, lines } = memoryLog();
    const scheduler = new Scheduler({
      timezone: 'UTC',
      jobs: [
        {
          name: 'daily',
          cron: '* * * * *',
          run: async () => {
            if (calls++ === 0) throw new Error('boom');
          },
        },
      ],
      log,
      driver: cron,
      metrics: createMetrics(),
    });
    scheduler.start();
    cron.fire('daily', new Date());
    await scheduler.idle();
    cron.fire('daily', new Date());
    await scheduler.idle();
    expect(calls).toBe(2);
    expect(lines.filter((line) => line.msg === 'scheduled job failed')).toHaveLength(1);
  });

  it('stop() ends the schedules, drops queued ticks and resolves when the run in progress ends', async () => {
    const cron = new HandCron();
    const daily = gatedJob('daily', '30 6 * * *');
    const digest = gatedJob('digest', '0 8 * * 1');
    const scheduler = new Scheduler({ timezone: 'UTC', jobs: [daily.job, digest.job], log: memoryLog().log, driver: cron, metrics: createMetrics() });
    scheduler.start();
    scheduler.trigger('daily', 'start');
    scheduler.trigger('digest', 'schedule');
    await settle();
    let stopped = false;
    const stopping = scheduler.stop().then(() => (stopped = true));
    await settle();
    expect(stopped).toBe(false);
    expect([...cron.entries.values()].every((entry) => entry.stopped)).toBe(true);
    expect(scheduler.trigger('daily', 'schedule')).toBe('skipped');
    daily.release();
    await stopping;
    expect(digest.runs).toHaveLength(0);
  });
});

describe('nodeCronDriver', () => {
  it('fires on node-cron’s schedule with the tick instant, until stopped', async () => {
    const ticks: Date[] = [];
    // A six-field (per-second) expression keeps the test short; plumbline's config allows five fields only.
    const task = nodeCronDriver.schedule({ name: 'test-every-second', expression: '* * * * * *', timezone: 'America/New_York', onTick: (at) => ticks.push(at), log: memoryLog().log });
    const started = Date.now();
    while (ticks.length === 0 && Date.now() - started < 3000) await new Promise((resolve) => setTimeout(resolve, 50));
    await task.stop();
    expect(ticks.length).toBeGreaterThan(0);
    expect(Math.abs(ticks[0]!.getTime() - Date.now())).toBeLessThan(3000);
    const seen = ticks.length;
    await new Promise((resolve) => setTimeout(resolve, 1200));
    expect(ticks.length).toBe(seen);
  });
});
