/**
 * A warehouse that hangs must not hang the service: with the events table
 * locked (ACCESS EXCLUSIVE, as a migration or a stuck job holds it), the daily
 * pass fails after `connections.lock_timeout` instead of waiting forever,
 * releases its claim, and the next pass succeeds once the lock is gone. Every
 * pool carries the configured session limits.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createMetrics } from '../../service/metrics.js';
import { Claim } from '../../service/runner/claim.js';
import { lockName } from '../../service/runner/queries.js';
import { Runner } from '../../service/runner/runner.js';
import type { Runtime } from '../../service/runtime.js';
import { createRunnerFixture, type RunnerFixture } from './fixture.js';

const NOW = new Date('2026-03-12T12:00:00Z');

describe('a locked warehouse', () => {
  let fixture: RunnerFixture;
  let rt: Runtime;

  beforeAll(async () => {
    fixture = await createRunnerFixture({ days: daysBetween('2026-03-01', '2026-03-12'), catchUpDays: 2 });
    fixture.config.main.connections.lock_timeout = 1;
    fixture.config.main.connections.idle_in_transaction_timeout = 120;
    fixture.config.main.connections.state_statement_timeout = 300;
    rt = await fixture.open();
  });
  afterAll(async () => {
    await fixture?.drop();
  });

  it('opens every connection with the configured limits', async () => {
    const { rows } = await rt.state.query<{ lock: string; idle: string; statement: string }>(
      `select current_setting('lock_timeout') as lock, current_setting('idle_in_transaction_session_timeout') as idle, current_setting('statement_timeout') as statement`,
    );
    expect(rows[0]).toEqual({ lock: '1s', idle: '2min', statement: '5min' });
  });

  it('fails the pass after the lock timeout, releases the claim, and the next pass succeeds', async () => {
    const holder = new pg.Client({ connectionString: fixture.url });
    await holder.connect();
    await holder.query('begin');
    await holder.query(`lock table ${quoteIdent(fixture.warehouse.schema)}.events in access exclusive mode`);
    const runner = new Runner(rt, { clock: () => NOW, metrics: createMetrics() });
    try {
      const started = Date.now();
      const failed = await runner.daily('start');
      expect(failed.status).toBe('failed');
      expect(failed.error).toMatch(/lock timeout/);
      expect(Date.now() - started).toBeLessThan(30_000);
      const claim = await Claim.acquire(rt.state, lockName(rt.stateSchema, 'daily'), { pollMs: 100, signal: AbortSignal.timeout(2000), onWait: () => undefined });
      expect(claim).toBeDefined();
      await claim!.release();
    } finally {
      await holder.query('rollback');
      await holder.end();
    }
    const next = await runner.daily('schedule');
    expect(next.status).toBe('done');
    expect(next.days.length).toBeGreaterThan(0);
  }, 120_000);
});
