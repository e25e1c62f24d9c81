/**
 * The scheduler driving a real runner against the test database, with an
 * injected clock and a hand-fired cron: the pass at start catches up the
 * missed days of the window, a tick runs the days due since, and a tick that
 * comes while a pass is running is skipped, so no (flow, day) is judged twice.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createMetrics } from '../../service/metrics.js';
import { Runner } from '../../service/runner/runner.js';
import type { Runtime } from '../../service/runtime.js';
import { Scheduler } from '../../service/scheduler/scheduler.js';
import { createRunnerFixture, type RunnerFixture } from '../runner/fixture.js';
import { HandCron } from './helpers.js';

describe('scheduled passes with an injected clock', () => {
  let fixture: RunnerFixture;
  let rt: Runtime;
  let now: Date;
  let runner: Runner;
  let scheduler: Scheduler;
  const cron = new HandCron();
  const metrics = createMetrics();

  beforeAll(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-01', '2026-03-12'), catchUpDays: 3 });
    rt = await fixture.open();
    runner = new Runner(rt, { clock: () => now, metrics, claimPollMs: 50 });
    scheduler = new Scheduler({ timezone: rt.timezone, jobs: [{ name: 'daily', cron: '30 6 * * *', run: (tick) => runner.daily(tick.reason) }], log: rt.log, driver: cron, metrics });
    scheduler.start();
  });
  afterAll(async () => {
    await scheduler.stop();
    await fixture.drop();
  });

  async function passes() {
    const { rows } = await fixture.state.pool.query<{ reason: string; status: string; slot: string; days: string[] }>(
      `select reason, status, to_char(slot, 'YYYY-MM-DD') as slot, array(select to_char(d, 'YYYY-MM-DD') from unnest(days) d) as days
       from ${quoteIdent(fixture.state.schema)}.runner_passes order by id`,
    );
    return rows;
  }

  it('catches up the missed days of the window at start, and is not ready until then', async () => {
    now = new Date('2026-03-08T12:00:00Z'); // 08:00 EDT on the spring-forward day: 2026-03-07 has settled
    expect(runner.firstDailyPassEnded).toBe(false);
    scheduler.trigger('daily', 'start');
    await scheduler.idle();
    expect(runner.firstDailyPassEnded).toBe(true);
    expect(await passes()).toEqual([{ reason: 'start', status: 'done', slot: '2026-03-07', days: ['2026-03-04', '2026-03-05', '2026-03-06', '2026-03-07'] }]);
    const counts = await fixture.judgeCounts();
    expect(counts.map((c) => c.day)).toEqual(daysBetween('2026-03-04', '2026-03-07').flatMap((day) => [day, day]));
    expect(counts.every((c) => c.runs === 1 && c.verdict === 'judged')).toBe(true);
  });

  it('a tick runs the days that settled since, skipping the ones already judged', async () => {
    now = new Date('2026-03-11T10:30:00Z'); // 06:30 EDT, three days later: the process was down in between
    cron.fire('daily', now);
    await scheduler.idle();
    const last = (await passes()).at(-1)!;
    expect(last).toEqual({ reason: 'schedule', status: 'done', slot: '2026-03-10', days: ['2026-03-08', '2026-03-09', '2026-03-10'] });
  });

  it('a tick while a pass is running is skipped: every (flow, day) is judged once', async () => {
    now = new Date(now.getTime() + 86_400_000); // the next morning: 2026-03-11 is due
    cron.fire('daily', now);
    cron.fire('daily', now);
    cron.fire('daily', new Date(now.getTime() + 1000));
    await scheduler.idle();
    const skipped = await metrics.registry.getSingleMetric('plumbline_ticks_skipped_total')!.get();
    expect(skipped.values).toEqual([{ value: 2, labels: { job: 'daily' } }]);
    const all = await passes();
    expect(all).toHaveLength(3);
    expect(all.at(-1)!.days).toEqual(['2026-03-11']);
    const counts = await fixture.judgeCounts();
    expect(new Set(counts.map((c) => c.day))).toEqual(new Set(daysBetween('2026-03-04', '2026-03-11')));
    expect(counts.filter((c) => c.runs !== 1)).toEqual([]);
  });

  it('a tick with nothing due still records a successful pass (readiness reads it)', async () => {
    cron.fire('daily', now);
    await scheduler.idle();
    const last = (await passes()).at(-1)!;
    expect(last).toMatchObject({ status: 'done', slot: '2026-03-11', days: [] });
  });
});
