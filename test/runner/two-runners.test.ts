/**
 * Two runners (two Runtimes with their own pools, as two replicas) against
 * one state schema: each (flow, day) is judged once, the digest runs once per
 * slot, a runner that dies mid-pass is taken over and its days rerun, and a
 * shutdown whose grace period runs out marks the pass abandoned.
 */
import { spawn } from 'node:child_process';
import { createServer } from 'node:http';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createMetrics, type Metrics } from '../../service/metrics.js';
import { projectPath } from '../../service/paths.js';
import { enqueueChat } from '../../service/delivery/outbox.js';
import { chatDelivery } from '../../service/runner/jobs.js';
import { DEAD_RUNNER_ERROR } from '../../service/runner/queries.js';
import { Runner, type DigestJob } from '../../service/runner/runner.js';
import { stopScheduledWork } from '../../service/runner/shutdown.js';
import type { Runtime } from '../../service/runtime.js';
import { Scheduler } from '../../service/scheduler/scheduler.js';
import { HandCron } from '../scheduler/helpers.js';
import { createRunnerFixture, type RunnerFixture } from './fixture.js';

/** 08:00 EDT on 2026-03-12: 2026-03-11 has settled; with catch_up_days 3 the window is 2026-03-08..11. */
const NOW = new Date('2026-03-12T12:00:00Z');
const WINDOW = daysBetween('2026-03-08', '2026-03-11');

async function metricValue(metrics: Metrics, name: string, labels: Record<string, string>): Promise<number> {
  const metric = await metrics.registry.getSingleMetric(name)!.get();
  const sample = metric.values.find((value) => Object.entries(labels).every(([key, wanted]) => value.labels[key] === wanted));
  return sample?.value ?? 0;
}

async function until(condition: () => Promise<boolean>, what: string): Promise<void> {
  const started = Date.now();
  while (!(await condition())) {
    if (Date.now() - started > 20_000) throw new Error(`timed out waiting for ${what}`);
    await new Promise((resolve) => setTimeout(resolve, 20));
  }
}

describe('two runners on one state schema', () => {
  let fixture: RunnerFixture;
  let a: Runtime;
  let b: Runtime;
  const s = () => quoteIdent(fixture.state.schema);

  beforeEach(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-01', '2026-03-12'), catchUpDays: 3 });
    [a, b] = await Promise.all([fixture.open(), fixture.open()]);
  });
  afterEach(async () => {
    await fixture.drop();
  });

  /** Holds an exclusive lock on event_days, so a rollup blocks on its write until released. */
  async function blockRollups(): Promise<{ release(): Promise<void> }> {
    const client = await fixture.state.pool.connect();
    await client.query('begin');
    await client.query(`lock table ${s()}.event_days in access exclusive mode`);
    return {
      async release() {
        await client.query('rollback');
        client.release();
      },
    };
  }

  const runningRows = async (table: 'runs' | 'runner_passes') =>
    (await fixture.state.pool.query<{ n: number }>(`select count(*)::int as n from ${s()}.${table} where status = 'running'`)).rows[0]!.n;

  it('judges each (flow, day) once when both start their pass together', async () => {
    const metricsA = createMetrics();
    const metricsB = createMetrics();
    const runnerA = new Runner(a, { clock: () => NOW, metrics: metricsA, claimPollMs: 20 });
    const runnerB = new Runner(b, { clock: () => NOW, metrics: metricsB, claimPollMs: 20 });
    const [reportA, reportB] = await Promise.all([runnerA.daily('start'), runnerB.daily('start')]);

    expect([reportA.status, reportB.status]).toEqual(['done', 'done']);
    // One ran the window; the other waited for the claim, then found every day judged.
    const [worker, idle] = reportA.days.length > 0 ? [reportA, reportB] : [reportB, reportA];
    expect(worker.days).toEqual(WINDOW);
    expect(idle.days).toEqual([]);
    expect(idle.plan!.due).toEqual([]);

    const counts = await fixture.judgeCounts();
    expect(counts).toHaveLength(WINDOW.length * fixture.config.flows.length);
    expect(counts.every((count) => count.runs === 1 && count.verdict === 'judged')).toBe(true);
    const rollups = await fixture.state.pool.query<{ day: string; n: number }>(
      `select to_char(day, 'YYYY-MM-DD') as day, count(*)::int as n from ${s()}.runs where kind = 'rollup' group by day order by day`,
    );
    expect(rollups.rows).toEqual(WINDOW.map((day) => ({ day, n: 1 })));

    const waited = (await metricValue(metricsA, 'plumbline_claims_total', { outcome: 'waited' })) + (await metricValue(metricsB, 'plumbline_claims_total', { outcome: 'waited' }));
    expect(waited).toBe(1);

    // Every line is JSON with the runner; the pass's lines carry its run id and day; no connection string leaks.
    const passLines = fixture.logs().filter((line) => line.msg === 'flow judged');
    expect(passLines).toHaveLength(WINDOW.length * fixture.config.flows.length);
    expect(passLines.every((line) => line.run === worker.passId && typeof line.day === 'string' && typeof line.flow === 'string')).toBe(true);
    expect(fixture.logText()).not.toContain(fixture.url);
    expect(fixture.logText()).not.toMatch(/postgres(ql)?:\/\//);
  });

  it('sends each chat message once when both replicas deliver after their passes and on their delivery ticks', async () => {
    // A chat receiver that counts posts per idempotency key.
    const received = new Map<string, number>();
    const receiver = createServer((request, response) => {
      const key = String(request.headers['idempotency-key']);
      request.resume().on('end', () => {
        received.set(key, (received.get(key) ?? 0) + 1);
        response.end('ok');
      });
    });
    await new Promise<void>((resolve) => receiver.listen(0, '127.0.0.1', resolve));
    const previous = process.env.PLUMBLINE_CHAT_WEBHOOK;
    process.env.PLUMBLINE_CHAT_WEBHOOK = `http://127.0.0.1:${(receiver.address() as { port: number }).port}/hooks/test`;
    try {
      const keys = await seedOutbox(6);
      const metricsA = createMetrics();
      const metricsB = createMetrics();
      const runnerA = new Runner(a, { clock: () => NOW, metrics: metricsA, claimPollMs: 20, deliver: chatDelivery(metricsA) });
      const runnerB = new Runner(b, { clock: () => NOW, metrics: metricsB, claimPollMs: 20, deliver: chatDelivery(metricsB) });
      await Promise.all([
        runnerA.daily('start'),
        runnerB.daily('start'),
        chatDelivery(metricsA)(a, { log: a.log }),
        chatDelivery(metricsB)(b, { log: b.log }),
      ]);
      await Promise.all([chatDelivery(metricsA)(a, { log: a.log }), chatDelivery(metricsB)(b, { log: b.log })]);

      expect(new Map([...received].sort())).toEqual(new Map(keys.map((key) => [`"${key}"`, 1])));
      const { rows } = await fixture.state.pool.query<{ state: string; n: number }>(`select state, count(*)::int as n from ${s()}.outbox group by state`);
      expect(rows).toEqual([{ state: 'sent', n: keys.length }]);
      const sent = (await metricValue(metricsA, 'plumbline_deliveries_total', { channel: 'chat', outcome: 'sent' })) + (await metricValue(metricsB, 'plumbline_deliveries_total', { channel: 'chat', outcome: 'sent' }));
      expect(sent).toBe(keys.length);
      expect(fixture.logText()).not.toContain('/hooks/test');
    } finally {
      if (previous === undefined) delete process.env.PLUMBLINE_CHAT_WEBHOOK;
      else process.env.PLUMBLINE_CHAT_WEBHOOK = previous;
      receiver.close();
    }
  });

  /** Queues `count` chat messages (two per incident) the way judging does, through the outbox API. */
  async function seedOutbox(count: number): Promise<string[]> {
    const client = await fixture.state.pool.connect();
    try {
      await client.query('begin');
      for (let i = 0; i < count / 2; i++) {
        const id = `monthly_pass-20260310-0000000${i}`;
        await client.query({
          text: `insert into ${s()}.incidents (id, fingerprint, flow, owner, flows, owners, status, severity, muted, title, subject, platform, version, cause_label,
              since, opened_day, last_seen_day, days_seen, opened_at, updated_at)
            values ($1, $2, 'monthly_pass', 'growth-analytics', '{monthly_pass}', '{growth-analytics}', 'open', 'page', false, 'android zone_picker views fell', 'zone_picker', 'android', null,
              'platform', '2026-03-10', '2026-03-10', '2026-03-10', 1, now(), now())`,
          values: [id, `fp${i}`],
        });
        for (const [event, day] of [['opened', '2026-03-10'], ['resolved', '2026-03-11']] as const) {
          const payload = { text: `${event} ${id}`, blocks: [{ type: 'section', text: { type: 'mrkdwn', text: `${event} ${id}` } }] };
          await enqueueChat(client, fixture.state.schema, { incidentId: id, event, day, payload, summary: `${event} ${id}` }, new Date(Date.now() - 1000));
        }
      }
      await client.query('commit');
    } finally {
      client.release();
    }
    const { rows } = await fixture.state.pool.query<{ key: string }>(`select idempotency_key as key from ${s()}.outbox order by key`);
    expect(rows).toHaveLength(count);
    return rows.map((row) => row.key);
  }

  it('runs the digest once per slot across replicas, even when the second asks after the first finished', async () => {
    const sent: string[] = [];
    const digest: DigestJob = async (_rt, { slot }) => {
      await new Promise((resolve) => setTimeout(resolve, 50));
      sent.push(slot);
    };
    const runnerA = new Runner(a, { clock: () => NOW, metrics: createMetrics(), claimPollMs: 20, digest });
    const runnerB = new Runner(b, { clock: () => NOW, metrics: createMetrics(), claimPollMs: 20, digest });
    const reports = await Promise.all([runnerA.digest('schedule'), runnerB.digest('schedule')]);
    expect(reports.map((report) => report.status).sort()).toEqual(['done', 'skipped']);
    expect((await runnerB.digest('schedule')).status).toBe('skipped');
    expect(sent).toEqual(['2026-03-12']);
  });

  it('a runner killed mid-pass lets go of its claim; the other takes over and reruns its days', async () => {
    const blocked = await blockRollups();
    // Runner A lives in a process of its own, so it can be killed outright (SIGKILL: no handler runs).
    const child = spawn(process.execPath, ['--import', 'tsx', 'test/runner/child-runner.ts'], {
      cwd: projectPath(),
      env: {
        ...process.env,
        PLUMBLINE_TEST_CONFIG: JSON.stringify(fixture.config),
        PLUMBLINE_TEST_NOW: NOW.toISOString(),
        PLUMBLINE_WAREHOUSE_URL: fixture.url,
        PLUMBLINE_STATE_URL: fixture.url,
      },
      stdio: ['ignore', 'ignore', 'pipe'],
    });
    let childLog = '';
    child.stderr.on('data', (chunk: Buffer) => (childLog += chunk.toString('utf8')));
    const exited = new Promise<NodeJS.Signals | null>((resolve) => child.once('exit', (_code, signal) => resolve(signal)));
    await until(async () => (await runningRows('runs')) > 0 || child.exitCode !== null, "runner A's rollup to start");
    expect(child.exitCode, childLog).toBeNull();

    const runnerB = new Runner(b, { clock: () => NOW, metrics: createMetrics(), claimPollMs: 20 });
    const passB = runnerB.daily('start');
    await until(async () => fixture.logs().some((line) => String(line.msg).includes('waiting for it to finish')), 'runner B to wait for the claim');
    child.kill('SIGKILL');
    expect(await exited).toBe('SIGKILL');
    await blocked.release();

    expect(await passB).toMatchObject({ status: 'done', days: WINDOW });
    const { rows: passRows } = await fixture.state.pool.query<{ status: string; error: string | null }>(`select status, error from ${s()}.runner_passes order by id`);
    expect(passRows).toEqual([
      { status: 'abandoned', error: DEAD_RUNNER_ERROR },
      { status: 'done', error: null },
    ]);
    const { rows: runRows } = await fixture.state.pool.query<{ kind: string; status: string }>(
      `select kind, status from ${s()}.runs where status <> 'done' order by id`,
    );
    expect(runRows).toEqual([{ kind: 'rollup', status: 'abandoned' }]);
    const counts = await fixture.judgeCounts();
    expect(counts).toHaveLength(WINDOW.length * fixture.config.flows.length);
    expect(counts.every((count) => count.runs === 1 && count.verdict === 'judged')).toBe(true);
  });

  it('a shutdown whose grace period runs out marks the pass and its runs abandoned; the next pass reruns the days', async () => {
    const blocked = await blockRollups();
    const runnerA = new Runner(a, { clock: () => NOW, metrics: createMetrics(), claimPollMs: 20 });
    const scheduler = new Scheduler({ timezone: a.timezone, jobs: [{ name: 'daily', cron: '30 6 * * *', run: (tick) => runnerA.daily(tick.reason) }], log: a.log, driver: new HandCron(), metrics: createMetrics() });
    scheduler.start();
    scheduler.trigger('daily', 'start');
    await until(async () => (await runningRows('runs')) > 0, 'the rollup to start');

    expect(await stopScheduledWork([scheduler], runnerA, 200, a.log)).toBe('abandoned');
    const abandoned = async (table: 'runs' | 'runner_passes') =>
      (await fixture.state.pool.query<{ n: number }>(`select count(*)::int as n from ${s()}.${table} where status = 'abandoned'`)).rows[0]!.n;
    expect(await abandoned('runner_passes')).toBe(1);
    expect(await abandoned('runs')).toBe(1);
    expect(await runningRows('runs')).toBe(0);

    // The abandoned run goes on until the process exits; here it finishes its day and stops there.
    await blocked.release();
    await scheduler.idle();
    const { rows } = await fixture.state.pool.query<{ status: string }>(`select status from ${s()}.runner_passes`);
    expect(rows).toEqual([{ status: 'abandoned' }]);

    const runnerB = new Runner(b, { clock: () => NOW, metrics: createMetrics(), claimPollMs: 20 });
    const report = await runnerB.daily('start');
    expect(report.status).toBe('done');
    expect(report.days).toEqual(WINDOW.slice(1));
    const counts = await fixture.judgeCounts();
    expect(counts).toHaveLength(WINDOW.length * fixture.config.flows.length);
    expect(counts.every((count) => count.runs === 1 && count.verdict === 'judged')).toBe(true);
  });
});

