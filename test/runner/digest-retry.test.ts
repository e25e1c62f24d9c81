/**
 * The weekly digest is not lost to a failure or to downtime: a failed slot is
 * tried again after a backoff (5 min, then doubling; database time), and a
 * slot whose tick fell while no replica ran is caught up at start.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createMetrics } from '../../service/metrics.js';
import { DIGEST_RETRY_BASE_MS, Runner, digestRetryDelay, type DigestJob } from '../../service/runner/runner.js';
import type { Runtime } from '../../service/runtime.js';
import { createRunnerFixture, type RunnerFixture } from './fixture.js';

/** Tuesday 2026-03-10, 08:00 in New York: the Monday 08:00 slot (config/plumbline.yaml) of the 9th has passed. */
const TUESDAY = new Date('2026-03-10T12:00:00Z');

describe('digest retries and catch-up', () => {
  let fixture: RunnerFixture;
  let rt: Runtime;
  const s = () => quoteIdent(fixture.state.schema);

  beforeEach(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-08', '2026-03-09'), catchUpDays: 1 });
    rt = await fixture.open();
  });
  afterEach(async () => {
    await fixture.drop();
  });

  it('backs off 5 min, 10 min, ... up to 4 h', () => {
    expect([1, 2, 3, 7, 20].map(digestRetryDelay)).toEqual([5, 10, 20, 240, 240].map((minutes) => minutes * 60_000));
  });

  it('catches up the slot missed while down, at start', async () => {
    const slots: string[] = [];
    const runner = new Runner(rt, { clock: () => TUESDAY, metrics: createMetrics(), digest: async (_rt, { slot }) => void slots.push(slot) });
    expect(await runner.digest('start')).toMatchObject({ status: 'done' });
    expect(slots).toEqual(['2026-03-09']);
    // Sent: neither a retry nor another start sends it again.
    expect(await runner.digest('retry')).toMatchObject({ status: 'skipped' });
    expect(await runner.digest('start')).toMatchObject({ status: 'skipped' });
    expect(slots).toEqual(['2026-03-09']);
  });

  it('retries a failed digest once its backoff has passed, then stops', async () => {
    let tries = 0;
    const digest: DigestJob = async () => {
      tries++;
      if (tries <= 2) throw new Error('smtp: connection refused');
    };
    const runner = new Runner(rt, { clock: () => TUESDAY, metrics: createMetrics(), digest });
    expect(await runner.digest('start')).toMatchObject({ status: 'failed' });
    // Within the backoff: not tried.
    expect(await runner.digest('retry')).toMatchObject({ status: 'skipped' });
    expect(tries).toBe(1);
    const age = async (ms: number) =>
      await fixture.state.pool.query(`update ${s()}.runner_passes set finished_at = finished_at - make_interval(secs => ${ms / 1000}) where job = 'digest'`);
    await age(DIGEST_RETRY_BASE_MS + 1000);
    expect(await runner.digest('retry')).toMatchObject({ status: 'failed' });
    expect(tries).toBe(2);
    // Two failures: the wait has doubled.
    await age(DIGEST_RETRY_BASE_MS + 1000);
    expect(await runner.digest('retry')).toMatchObject({ status: 'skipped' });
    await age(DIGEST_RETRY_BASE_MS);
    expect(await runner.digest('retry')).toMatchObject({ status: 'done' });
    expect(tries).toBe(3);
    expect(await runner.digest('retry')).toMatchObject({ status: 'skipped' });
    const { rows } = await fixture.state.pool.query<{ slot: string; reason: string; status: string }>(
      `select to_char(slot, 'YYYY-MM-DD') as slot, reason, status from ${s()}.runner_passes where job = 'digest' order by id`,
    );
    expect(rows).toEqual([
      { slot: '2026-03-09', reason: 'start', status: 'failed' },
      { slot: '2026-03-09', reason: 'retry', status: 'failed' },
      { slot: '2026-03-09', reason: 'retry', status: 'done' },
    ]);
  });
});
