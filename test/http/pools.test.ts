/**
 * The claim, the passes and HTTP have pools of their own on the state server:
 * with every connection of the pass's pool and the warehouse's pool taken (a
 * rollup's statements running side by side), /readyz still answers 200 and a
 * claim can still be taken.
 */
import type pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { buildRouter, type ServeStatus } from '../../service/http/app.js';
import { routeModules } from '../../service/http/routes.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createMetrics } from '../../service/metrics.js';
import { Claim } from '../../service/runner/claim.js';
import { lockName } from '../../service/runner/queries.js';
import { httpRuntime, type Runtime } from '../../service/runtime.js';
import { createRunnerFixture, type RunnerFixture } from '../runner/fixture.js';

describe('separate pools for passes, claims and HTTP', () => {
  let fixture: RunnerFixture;
  let rt: Runtime;
  let server: HttpServer;
  const held: pg.PoolClient[] = [];
  const status: ServeStatus = { demo: false, startupDone: () => true, maxPassAgeSeconds: null };

  beforeAll(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-01', '2026-03-02'), catchUpDays: 1 });
    rt = await fixture.open();
    const metrics = createMetrics();
    server = await startHttpServer({ router: buildRouter({ rt: httpRuntime(rt), metrics, status }, routeModules), port: 0, host: '127.0.0.1', log: rt.log, metrics });
  });
  afterAll(async () => {
    for (const client of held) client.release();
    await server.close();
    await fixture.drop();
  });

  it('keeps /readyz at 200 and the claim free while a rollup holds every pass and warehouse connection', async () => {
    if (rt.warehouse.engine !== 'postgres') throw new Error('the fixture uses the PostgreSQL engine');
    // Warehouse and state share one URL here: the case where they used to share one pool.
    for (const pool of [rt.state, rt.warehouse.pool]) {
      for (let i = 0; i < pool.options.max; i++) held.push(await pool.connect());
    }
    expect(rt.state.waitingCount + rt.state.idleCount).toBe(0);
    const response = await fetch(`${server.url}/readyz`, { signal: AbortSignal.timeout(5000) });
    expect(response.status).toBe(200);
    expect(((await response.json()) as { checks: { database: { ok: boolean } } }).checks.database.ok).toBe(true);
    const claim = await Claim.acquire(rt.claims, lockName(rt.stateSchema, 'daily'), { pollMs: 10, signal: AbortSignal.timeout(2000), onWait: () => undefined });
    expect(claim).toBeDefined();
    await claim!.release();
  });
});
