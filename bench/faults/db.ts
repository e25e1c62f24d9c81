/**
 * `faults_db`: the databases misbehave under a running service. The state
 * lives in a PostgreSQL server of this section's own (embedded, in a
 * temporary folder), so it can be restarted without touching the shared one;
 * the events stay on the run's server. Three faults, each followed by the
 * next tick:
 *
 * - the events table held under an exclusive lock: the daily pass must fail
 *   within the warehouse statement timeout (5 s here), let go of its claim,
 *   and the next pass, once the lock is gone, must succeed;
 * - the state server restarted mid-pass: the pass fails (never hangs, never
 *   ends the process), the claim is free, the next pass judges every due day;
 * - the state server restarted mid-send: every queued chat message reaches
 *   the receiver exactly once (none lost, none posted twice).
 */
import { randomBytes } from 'node:crypto';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import pg from 'pg';
import { UnrecordedOutcomes, drainOutbox } from '../../service/delivery/sender.js';
import { freePort, startEmbeddedPostgres, type EmbeddedServer } from '../../service/db/embedded.js';
import { quoteIdent, quoteQualified } from '../../service/db/sql.js';
import { createLogger } from '../../service/log.js';
import { createMetrics } from '../../service/metrics.js';
import { judgeDays, replayClock, rollupRange } from '../../service/pipeline/run-day.js';
import { Claim } from '../../service/runner/claim.js';
import { lockName } from '../../service/runner/queries.js';
import { Runner, type PassReport } from '../../service/runner/runner.js';
import { openRuntime, type Runtime } from '../../service/runtime.js';
import { EVAL_URL_VARIABLE, writeScenarioConfig } from '../../service/scenarios/config.js';
import { generateEvents } from '../../service/scenarios/generate.js';
import { dayOf, drawScenario } from '../../service/scenarios/model.js';
import { passClock } from '../../service/scenarios/replay.js';
import type { FaultFigure, FaultSection } from './section.js';

const SEED = 19_019;
const LIMITS = { minDays: 42, maxDays: 42, maxJourneys: 400 };
const STATE_URL_VARIABLE = 'PLUMBLINE_FAULTS_STATE_URL';
const WEBHOOK_VARIABLE = 'PLUMBLINE_FAULTS_WEBHOOK';
/** Longest a pass may take to give up on a fault before it counts as hung. */
const HUNG_AFTER_MS = 120_000;

/** The pass, or 'hung' when it has not ended within HUNG_AFTER_MS. */
async function bounded(pass: Promise<PassReport>): Promise<PassReport | 'hung'> {
  const timeout = sleep(HUNG_AFTER_MS, 'hung' as const);
  return await Promise.race([pass, timeout]);
}

/** Whether the daily claim can be taken within two seconds (by a connection of its own). */
async function claimIsFree(url: string, schema: string): Promise<boolean> {
  const pool = new pg.Pool({ connectionString: url, max: 1 });
  pool.on('error', () => undefined);
  try {
    const claim = await Claim.acquire(pool, lockName(schema, 'daily'), { pollMs: 100, signal: AbortSignal.timeout(2000), onWait: () => undefined });
    await claim?.release();
    return claim !== undefined;
  } finally {
    await pool.end();
  }
}

/** A chat webhook that answers after `delayMs` and counts posts per idempotency key. */
async function startReceiver(delayMs: number) {
  const posts = new Map<string, number>();
  let total = 0;
  const handle = async (request: IncomingMessage, response: ServerResponse) => {
    for await (const chunk of request) void chunk;
    const key = String(request.headers['idempotency-key']);
    posts.set(key, (posts.get(key) ?? 0) + 1);
    total++;
    await sleep(delayMs);
    response.end('ok');
  };
  const server = createServer((request, response) => void handle(request, response));
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  return {
    url: `http://127.0.0.1:${(server.address() as AddressInfo).port}/hooks/faults`,
    posts,
    total: () => total,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

export const faultsDb: FaultSection = {
  name: 'db',
  async run(env) {
    const url = await env.database();
    const scenario = drawScenario(SEED, LIMITS);
    const schema = `faults_db_${randomBytes(3).toString('hex')}`;
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-faults-db-'));
    const stateDir = await mkdtemp(join(tmpdir(), 'plumbline-faults-state-'));
    const port = await freePort();
    let state: EmbeddedServer = await startEmbeddedPostgres({ dataDir: stateDir, port });
    const restartState = async (downMs: number) => {
      await state.stop();
      await sleep(downMs);
      state = await startEmbeddedPostgres({ dataDir: stateDir, port });
    };
    const pool = new pg.Pool({ connectionString: url, max: 2, application_name: 'plumbline-faults' });
    const receiver = await startReceiver(300);
    let rt: Runtime | undefined;
    const figures: FaultFigure[] = [];
    try {
      await pool.query(`create schema ${quoteIdent(schema)}`);
      const config = await writeScenarioConfig(scenario, dir, schema, url);
      config.main.state.url = `\${${STATE_URL_VARIABLE}}`;
      config.main.warehouse.statement_timeout = 5;
      config.main.delivery.chat.webhook_url = `\${${WEBHOOK_VARIABLE}}`;
      await generateEvents(pool, scenario, schema);
      const runtimeEnv = { [EVAL_URL_VARIABLE]: url, [STATE_URL_VARIABLE]: state.url, [WEBHOOK_VARIABLE]: receiver.url };
      rt = await openRuntime(config, { env: runtimeEnv, log: createLogger({ level: 'fatal' }), poolSize: 3 });
      const runtime = rt;
      const stateSchema = runtime.stateSchema;

      // History first, so incidents open and messages are queued by the passes below.
      const last = scenario.days - 1;
      const history = Array.from({ length: last - 4 }, (_, i) => dayOf(scenario, i));
      await rollupRange(runtime, history);
      await judgeDays(runtime, history, replayClock(runtime));
      let now = passClock(scenario, dayOf(scenario, last - 4));
      const runner = new Runner(runtime, { clock: () => now, claimPollMs: 100, recheckAfterSeconds: 0, metrics: createMetrics() });
      runtime.config.main.schedule.catch_up_days = 0;

      // 1. The events table locked by another session.
      const locker = await pool.connect();
      await locker.query('begin');
      await locker.query(`lock table ${quoteQualified(`${schema}.${scenario.table}`)} in access exclusive mode`);
      let started = performance.now();
      const locked = await bounded(runner.daily('schedule'));
      const lockedSeconds = (performance.now() - started) / 1000;
      const lockedFailed = locked !== 'hung' && locked.status === 'failed';
      const lockedClaimFree = await claimIsFree(state.url, stateSchema);
      await locker.query('rollback');
      locker.release();
      if (locked === 'hung') await runner.daily('schedule').catch(() => undefined);
      const afterLock = await bounded(runner.daily('schedule'));
      const lockedNext = afterLock !== 'hung' && afterLock.status === 'done';
      env.log(`faults_db: locked warehouse: pass ${locked === 'hung' ? 'hung' : locked.status} in ${lockedSeconds.toFixed(1)} s (${locked === 'hung' ? '' : (locked.error ?? '')}); claim free: ${lockedClaimFree}; next pass ${afterLock === 'hung' ? 'hung' : afterLock.status}`);
      figures.push(
        { name: 'locked warehouse: pass failed cleanly', value: lockedFailed ? 'yes' : locked === 'hung' ? 'hung' : 'no', target: 'yes', met: lockedFailed },
        { name: 'locked warehouse: seconds to fail', value: Number(lockedSeconds.toFixed(1)) },
        { name: 'locked warehouse: claim released, next pass done', value: lockedClaimFree && lockedNext ? 'yes' : 'no', target: 'yes', met: lockedClaimFree && lockedNext },
      );

      // 2. The state server restarted while a pass runs (three days due).
      runtime.config.main.schedule.catch_up_days = 2;
      now = passClock(scenario, dayOf(scenario, last - 1));
      started = performance.now();
      const midPass = runner.daily('schedule');
      await sleep(1500);
      await restartState(1000);
      const interrupted = await bounded(midPass);
      const interruptedSeconds = (performance.now() - started) / 1000;
      const passFailed = interrupted !== 'hung' && interrupted.status === 'failed';
      const passClaimFree = await claimIsFree(state.url, stateSchema);
      const resumed = await bounded(runner.daily('schedule'));
      const due = [dayOf(scenario, last - 3), dayOf(scenario, last - 2), dayOf(scenario, last - 1)];
      const { rows: judged } = await runtime.state.query<{ day: string }>({
        text: `select distinct to_char(day, 'YYYY-MM-DD') as day from ${quoteIdent(stateSchema)}.judged_days where day between $1 and $2 order by 1`,
        values: [due[0], due[2]],
      });
      const passNext = resumed !== 'hung' && resumed.status === 'done' && judged.length === due.length;
      env.log(`faults_db: state restarted mid-pass: pass ${interrupted === 'hung' ? 'hung' : `${interrupted.status} after ${interrupted.days.length} day(s)`} in ${interruptedSeconds.toFixed(1)} s; claim free: ${passClaimFree}; next pass ${resumed === 'hung' ? 'hung' : `${resumed.status}, ${resumed.days.length} day(s)`}; judged ${judged.map((r) => r.day).join(', ')}`);
      figures.push(
        { name: 'state restarted mid-pass: pass failed cleanly', value: passFailed ? 'yes' : interrupted === 'hung' ? 'hung' : interrupted.status, target: 'yes', met: passFailed },
        { name: 'state restarted mid-pass: claim released, next pass judged every due day', value: passClaimFree && passNext ? 'yes' : 'no', target: 'yes', met: passClaimFree && passNext },
      );

      // 3. The state server restarted while messages are being posted (300 ms each).
      const { rows: queued } = await runtime.state.query<{ key: string }>(`select idempotency_key as key from ${quoteIdent(stateSchema)}.outbox`);
      const unrecorded = new UnrecordedOutcomes();
      let tickErrors = 0;
      let restarted = false;
      const deadline = Date.now() + 90_000;
      const restart = (async () => {
        while (receiver.total() < Math.min(2, queued.length) && Date.now() < deadline) await sleep(20);
        await restartState(1000);
        restarted = true;
      })();
      // The delivery schedule: a drain per tick, its failures logged and retried at the next.
      for (;;) {
        try {
          await drainOutbox(runtime, { until: 'idle', unrecorded, env: runtimeEnv, timeoutMs: 5000 });
        } catch {
          tickErrors++;
        }
        if (restarted) {
          const { rows } = await runtime.state.query<{ n: number }>(`select count(*)::int as n from ${quoteIdent(stateSchema)}.outbox where state in ('pending', 'sending')`).catch(() => ({ rows: [{ n: 1 }] }));
          if (rows[0]!.n === 0 || Date.now() > deadline) break;
        }
        await sleep(200);
      }
      await restart;
      const { rows: states } = await runtime.state.query<{ state: string; n: number }>(`select state, count(*)::int as n from ${quoteIdent(stateSchema)}.outbox group by state`);
      const lost = queued.filter((row) => !receiver.posts.has(`"${row.key}"`)).length;
      const duplicated = [...receiver.posts.values()].reduce((sum, n) => sum + n - 1, 0);
      env.log(`faults_db: state restarted mid-send: ${queued.length} messages, ${receiver.total()} posts, ${tickErrors} failed ticks; outbox ${states.map((s) => `${s.n} ${s.state}`).join(', ')}`);
      figures.push(
        { name: 'state restarted mid-send: messages queued', value: queued.length },
        { name: 'state restarted mid-send: messages lost', value: lost, target: '0', met: lost === 0 && queued.length > 0 },
        { name: 'state restarted mid-send: messages posted twice', value: duplicated, target: '0', met: duplicated === 0 },
      );
      return figures;
    } finally {
      await rt?.close().catch(() => undefined);
      await receiver.close();
      await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
      await pool.end();
      await state.stop();
      await rm(stateDir, { recursive: true, force: true });
      await rm(dir, { recursive: true, force: true });
    }
  },
};
