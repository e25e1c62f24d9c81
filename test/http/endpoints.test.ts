/**
 * /healthz, /readyz and /metrics served by the real server (port 0) over a
 * state schema on the test database, before and after a daily pass.
 */
import { createServer, type Server, type Socket } from 'node:net';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { buildRouter, type ServeStatus } from '../../service/http/app.js';
import { readiness } from '../../service/http/health.js';
import { routeModules } from '../../service/http/routes.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createMetrics, type Metrics } from '../../service/metrics.js';
import { Runner } from '../../service/runner/runner.js';
import type { Runtime } from '../../service/runtime.js';
import { createRunnerFixture, type RunnerFixture } from '../runner/fixture.js';
import { parsePrometheusText } from './prometheus-text.js';

const NOW = new Date('2026-03-12T12:00:00Z');
const WINDOW = daysBetween('2026-03-09', '2026-03-11');

describe('health, readiness and metrics over HTTP', () => {
  let fixture: RunnerFixture;
  let rt: Runtime;
  let metrics: Metrics;
  let runner: Runner;
  let server: HttpServer;
  const status: ServeStatus = { demo: false, startupDone: () => runner.firstDailyPassEnded, maxPassAgeSeconds: 36 * 3600 };

  beforeAll(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-01', '2026-03-12'), catchUpDays: 2 });
    rt = await fixture.open();
    metrics = createMetrics();
    runner = new Runner(rt, { clock: () => NOW, metrics });
    server = await startHttpServer({ router: buildRouter({ rt, metrics, status }, routeModules), port: 0, host: '127.0.0.1', log: rt.log, metrics });
  });
  afterAll(async () => {
    await server.close();
    await fixture.drop();
  });

  const get = (path: string) => fetch(`${server.url}${path}`);

  it('answers /healthz while the process lives', async () => {
    const response = await get('/healthz');
    expect(response.status).toBe(200);
    expect(await response.text()).toBe('ok\n');
  });

  it('is not ready before the catch-up pass at start has ended, nor without a successful daily pass', async () => {
    const response = await get('/readyz');
    expect(response.status).toBe(503);
    const body = (await response.json()) as { ready: boolean; checks: Record<string, { ok: boolean }> };
    expect(body.ready).toBe(false);
    expect(body.checks.database!.ok).toBe(true);
    expect(body.checks.startup!.ok).toBe(false);
    expect(body.checks.last_daily_pass!.ok).toBe(false);
  });

  it('after a daily pass: ready, and /metrics parses as Prometheus text with the run metrics', async () => {
    const report = await runner.daily('start');
    expect(report).toMatchObject({ status: 'done', days: WINDOW });

    const ready = await get('/readyz');
    expect(ready.status).toBe(200);
    expect(((await ready.json()) as { ready: boolean }).ready).toBe(true);

    const response = await get('/metrics');
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toBe('text/plain; version=0.0.4; charset=utf-8');
    const families = parsePrometheusText(await response.text());
    const family = (name: string) => {
      const found = families.get(name);
      if (!found) throw new Error(`no ${name} in /metrics`);
      return found;
    };
    const value = (name: string, labels: Record<string, string>, sampleName = name) =>
      family(name).samples.find((s) => s.name === sampleName && Object.entries(labels).every(([k, v]) => s.labels[k] === v))?.value;

    expect(family('plumbline_run_duration_seconds').type).toBe('histogram');
    expect(value('plumbline_run_duration_seconds', { kind: 'daily' }, 'plumbline_run_duration_seconds_count')).toBe(1);
    expect(value('plumbline_run_duration_seconds', { kind: 'day' }, 'plumbline_run_duration_seconds_count')).toBe(WINDOW.length);
    expect(family('plumbline_runs_total').type).toBe('counter');
    expect(value('plumbline_runs_total', { kind: 'daily', status: 'done' })).toBe(1);
    expect(value('plumbline_runs_total', { kind: 'day', status: 'done' })).toBe(WINDOW.length);
    expect(value('plumbline_claims_total', { job: 'daily', outcome: 'claimed' })).toBe(1);
    // Declared even before the first sample, so dashboards and alerts can rely on them.
    expect(family('plumbline_findings_total').type).toBe('counter');
    expect(family('plumbline_deliveries_total').type).toBe('counter');
    expect(family('plumbline_ticks_skipped_total').type).toBe('counter');

    // From the state schema, in database time: the pass just ended, the newest event is from 2026-03-12.
    const { rows } = await fixture.state.pool.query<{ now: Date }>('select now() as now');
    const dbNow = rows[0]!.now.getTime() / 1000;
    expect(Math.abs(value('plumbline_last_success_timestamp_seconds', { job: 'daily' })! - dbNow)).toBeLessThan(60);
    const lag = family('plumbline_data_lag_seconds').samples;
    expect(new Set(lag.map((s) => s.labels.platform))).toEqual(new Set(['web', 'android', 'ios']));
    const newest = Date.parse('2026-03-11T17:02:00Z') / 1000; // the last event of the newest day rolled up
    for (const sample of lag) expect(Math.abs(sample.value - (dbNow - newest))).toBeLessThan(60);

    expect(value('plumbline_http_requests_total', { route: '/readyz', status: '200' })).toBe(1);
    expect(value('plumbline_http_requests_total', { route: '/readyz', status: '503' })).toBe(1);
  });

  it('is not ready when the last successful daily pass is older than allowed (database time)', async () => {
    const result = await readiness(rt.state, rt.stateSchema, { ...status, maxPassAgeSeconds: 0 });
    expect(result.ready).toBe(false);
    expect(result.checks.last_daily_pass).toMatchObject({ ok: false });
    expect(result.checks.last_daily_pass!.detail).toMatch(/^last successful daily pass ended \d+ s ago \(limit 0 s\)$/);
  });

  it('the demo skips the staleness check', async () => {
    const result = await readiness(rt.state, rt.stateSchema, { demo: true, startupDone: () => true, maxPassAgeSeconds: null });
    expect(result).toEqual({ ready: true, checks: { database: { ok: true, detail: 'state database reachable' }, startup: { ok: true, detail: 'catch-up at start ended' } } });
  });

  it('is not ready, within two seconds, when the state database does not answer', async () => {
    // A server that accepts connections and never says a word, like a database host behind a dead link.
    const sockets: Socket[] = [];
    const silent: Server = createServer((socket) => void sockets.push(socket));
    await new Promise<void>((resolve) => silent.listen(0, '127.0.0.1', resolve));
    const port = (silent.address() as { port: number }).port;
    const pool = new pg.Pool({ connectionString: `postgres://nobody@127.0.0.1:${port}/none`, connectionTimeoutMillis: 10_000 });
    pool.on('error', () => undefined);
    try {
      const started = Date.now();
      const result = await readiness(pool, rt.stateSchema, status);
      expect(Date.now() - started).toBeLessThan(3000);
      expect(result.ready).toBe(false);
      expect(result.checks.database).toEqual({ ok: false, detail: 'state database unreachable: no answer within 2000 ms' });
      expect(result.checks.last_daily_pass).toBeUndefined();
    } finally {
      for (const socket of sockets) socket.destroy();
      silent.close();
      await pool.end().catch(() => undefined);
    }
  });
});
