/**
 * `faults_kill`: a backfill (`plumbline run --from --to`, in a process of its
 * own) is killed with SIGKILL at a random moment, then run again to the end;
 * the state must equal that of a backfill never interrupted, and no chat
 * message may be queued twice. The scenario is one small generated app
 * (service/scenarios), long enough for incidents to open, so the outbox is
 * not empty. A moment is drawn uniformly over the backfill's progress (days
 * rolled up, then verdicts stored) from a fixed seed, so kills land in the
 * rollup and in the judging alike, however loaded the machine. `FAULTS_KILLS`
 * sets the number of kills (20 by default).
 */
import { spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import pg from 'pg';
import { addDays } from '../../checks/time.js';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { projectPath } from '../../service/paths.js';
import { EVAL_URL_VARIABLE, writeScenarioConfig } from '../../service/scenarios/config.js';
import { generateEvents } from '../../service/scenarios/generate.js';
import { Rng } from '../../service/scenarios/random.js';
import { drawScenario, lastDay } from '../../service/scenarios/model.js';
import type { FaultFigure, FaultSection } from './section.js';
import { differingTables, snapshotState, type Snapshot } from './state-snapshot.js';

/** The scenario: 42 days (incidents may open from day 35), a small app. */
const SEED = 19_019;
const LIMITS = { minDays: 42, maxDays: 42, maxJourneys: 400 };
const KILLS = Number(process.env.FAULTS_KILLS ?? 20);

interface Backfill {
  /** How it ended: an exit code, or the signal that ended it. */
  ended: number | NodeJS.Signals;
  seconds: number;
  output: string;
}

/**
 * `plumbline run --from --to` in a child process; killed with SIGKILL once
 * `killAt` resolves, when given.
 */
function backfill(configDir: string, url: string, from: string, to: string, killAt?: (alive: () => boolean) => Promise<void>): Promise<Backfill> {
  const started = performance.now();
  const child = spawn(process.execPath, ['--import', 'tsx', 'service/cli/main.ts', '--config', configDir, 'run', '--from', from, '--to', to, '--json'], {
    cwd: projectPath(),
    env: { ...process.env, [EVAL_URL_VARIABLE]: url, PLUMBLINE_LOG_LEVEL: 'error' },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  let output = '';
  child.stderr.on('data', (chunk: Buffer) => (output = (output + chunk.toString('utf8')).slice(-4000)));
  let exited = false;
  const ended = new Promise<Backfill>((resolve) => {
    child.once('exit', (code, signal) => {
      exited = true;
      resolve({ ended: signal ?? code ?? -1, seconds: (performance.now() - started) / 1000, output });
    });
  });
  void killAt?.(() => !exited).then(() => {
    if (!exited) child.kill('SIGKILL');
  });
  return ended;
}

/**
 * Resolves once the backfill's progress (days rolled up plus (flow, day)
 * verdicts stored) reaches `target`, so kills spread over the rollup and the
 * judging (where incidents and messages are written) whatever the machine's
 * speed; then waits `jitterMs` more.
 */
async function progressReaches(pool: pg.Pool, stateSchema: string, target: number, jitterMs: number, alive: () => boolean): Promise<void> {
  const s = quoteIdent(stateSchema);
  while (alive()) {
    const done = await pool
      .query<{ n: number }>(`select (select count(*) from ${s}.runs where kind = 'rollup' and status = 'done') + (select count(*) from ${s}.judged_days) as n`)
      .then(({ rows }) => Number(rows[0]!.n), () => 0);
    if (done >= target) break;
    await sleep(50);
  }
  await sleep(jitterMs);
}

/** Messages queued more than once for one (incident, event, day), or not queued by the reference at all. */
async function extraMessages(pool: pg.Pool, schema: string, reference: Set<string>): Promise<number> {
  const { rows } = await pool.query<{ key: string; n: number }>(
    `select incident_id || '|' || event || '|' || day as key, count(*)::int as n from ${quoteIdent(schema)}.outbox group by 1`,
  );
  return rows.reduce((sum, row) => sum + (row.n - 1) + (reference.has(row.key) ? 0 : 1), 0);
}

export const faultsKill: FaultSection = {
  name: 'kill',
  async run(env) {
    const url = await env.database();
    const scenario = drawScenario(SEED, LIMITS);
    const schema = `faults_kill_${randomBytes(3).toString('hex')}`;
    const stateSchema = `${schema}_state`;
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-faults-kill-'));
    const pool = new pg.Pool({ connectionString: url, max: 2, application_name: 'plumbline-faults' });
    try {
      await pool.query(`create schema ${quoteIdent(schema)}`);
      await writeScenarioConfig(scenario, dir, schema, url);
      const events = await generateEvents(pool, scenario, schema);
      const from = scenario.from;
      const to = addDays(lastDay(scenario), -1);
      const resetState = () => pool.query(`drop schema if exists ${quoteIdent(stateSchema)} cascade`);

      const uninterrupted = await backfill(dir, url, from, to);
      if (uninterrupted.ended !== 0) throw new Error(`faults_kill: the uninterrupted backfill ended ${uninterrupted.ended}: ${uninterrupted.output}`);
      const reference = await snapshotState(pool, stateSchema);
      const { rows: queued } = await pool.query<{ key: string }>(`select incident_id || '|' || event || '|' || day as key from ${quoteIdent(stateSchema)}.outbox`);
      const referenceKeys = new Set(queued.map((row) => row.key));
      env.log(
        `faults_kill: ${scenario.app}, ${scenario.days} days, ${events} events; backfill ${from}..${to} takes ${uninterrupted.seconds.toFixed(1)} s; ` +
          `reference: ${reference.incidents.rows} incidents, ${reference.outbox.rows} messages, ${reference.findings.rows} findings`,
      );

      const rng = new Rng(SEED).fork('kill moments');
      let identical = 0;
      let killedMidway = 0;
      let duplicates = 0;
      const differences: string[] = [];
      // A moment is a point of progress (days rolled up plus verdicts stored), uniform over the whole backfill, plus up to 200 ms.
      const units = daysBetween(from, to).length + reference.judged_days.rows;
      for (let trial = 1; trial <= KILLS; trial++) {
        await resetState();
        const target = Math.floor(rng.uniform(0, 1) * units);
        const jitterMs = Math.round(rng.uniform(0, 200));
        const killed = await backfill(dir, url, from, to, (alive) => progressReaches(pool, stateSchema, target, jitterMs, alive));
        const moment = `at ${target}/${units} + ${jitterMs} ms (${killed.seconds.toFixed(1)} s)`;
        if (killed.ended === 'SIGKILL') killedMidway++;
        const rerun = await backfill(dir, url, from, to);
        const snapshot: Snapshot | undefined = rerun.ended === 0 ? await snapshotState(pool, stateSchema) : undefined;
        const differing = snapshot ? differingTables(reference, snapshot) : ['(rerun failed)'];
        if (differing.length === 0) identical++;
        else differences.push(`#${trial} ${moment}: ${differing.join(', ')}`);
        duplicates += rerun.ended === 0 ? await extraMessages(pool, stateSchema, referenceKeys) : 0;
        env.log(`faults_kill: #${trial} killed ${moment} (${killed.ended}), rerun ${rerun.ended} in ${rerun.seconds.toFixed(1)} s: ${differing.length === 0 ? 'identical' : `differs in ${differing.join(', ')}`}`);
      }
      if (differences.length > 0) env.log(`faults_kill: differences: ${differences.join('; ')}`);
      const figures: FaultFigure[] = [
        { name: 'reruns identical to an uninterrupted backfill', value: `${identical}/${KILLS}`, target: `${KILLS}/${KILLS}`, met: identical === KILLS },
        { name: 'messages queued twice', value: duplicates, target: '0', met: duplicates === 0 },
        { name: 'backfills killed before their end', value: `${killedMidway}/${KILLS}` },
        { name: 'messages in the reference outbox', value: reference.outbox.rows },
        { name: 'uninterrupted backfill, seconds', value: Number(uninterrupted.seconds.toFixed(1)) },
      ];
      return figures;
    } finally {
      await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
      await pool.query(`drop schema if exists ${quoteIdent(stateSchema)} cascade`);
      await pool.end();
      await rm(dir, { recursive: true, force: true });
    }
  },
};
