/**
 * One scenario through plumbline's daily path, as a team installing it would
 * live it: the events table is generated, plumbline is installed with a
 * backfill of the first days (`run --from --to`), then the scheduler's daily
 * pass runs once per business day with its clock set to that morning. Rows
 * that arrive late are moved into the table only before the pass of the day
 * they arrive, after their own day was first judged; the newest day that
 * stops early is the last day the passes see. What plumbline stored
 * (incidents, their latest causes, chat messages, the cold start's findings,
 * the judged days) is read back for the scorer, and both schemas are dropped.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { addDays, dayStart } from '../../checks/time.js';
import { quoteIdent } from '../db/sql.js';
import { latestSightings, listIncidents } from '../incidents/store.js';
import { createLogger } from '../log.js';
import { createMetrics } from '../metrics.js';
import { runRange } from '../pipeline/run-range.js';
import { judgeDays, rollupRange } from '../pipeline/run-day.js';
import { Runner } from '../runner/runner.js';
import { openRuntime, type Runtime } from '../runtime.js';
import { findingsQuery, judgedDaysQuery } from '../state/summary.js';
import type { Truth } from './catalogue.js';
import { EVAL_URL_VARIABLE, writeScenarioConfig } from './config.js';
import { arriveQuery, generateEvents } from './generate.js';
import { COLD_START_DAYS, dayOf, drawScenario, lastDay, type DrawLimits, FULL_RANGE, type Scenario } from './model.js';

/** An incident as the scorer sees it. */
export interface ObservedIncident {
  id: string;
  /** The flow the scorer reads it for: one of `flows`. */
  flow: string;
  /** Every flow the incident holds back (several for a data delay). */
  flows: string[];
  platform: string | null;
  version: string | null;
  causeLabel: string;
  /** Highest severity of any sighting. */
  severity: 'note' | 'warn' | 'page';
  muted: boolean;
  /** A chat message announced its opening. */
  chat: boolean;
  openedDay: string;
  lastSeenDay: string;
  resolvedDay: string | null;
  subject: string;
  title: string;
  /** The latest sighting's cause sentence. */
  sentence: string;
  segment: { dimension: string; value: string } | null;
}

export interface ObservedFinding {
  flow: string;
  day: string;
  check: string;
  kind: string;
  platform: string | null;
  severity: string;
  message: string;
}

export interface ScenarioRun {
  seed: number;
  summary: {
    app: string;
    timezone: string;
    from: string;
    to: string;
    days: number;
    backfillDays: number;
    journeysPerDay: number;
    platforms: string[];
    flows: Array<{ id: string; steps: number }>;
    dimensions: string[];
    events: number;
  };
  truths: Truth[];
  incidents: ObservedIncident[];
  /** Findings of every check but freshness on the first COLD_START_DAYS days. */
  coldStart: ObservedFinding[];
  /** Days judged (verdict `judged`) per flow. */
  judgedDays: Record<string, string[]>;
  seconds: { generate: number; backfill: number; daily: number };
}

export interface ReplayOptions {
  url: string;
  limits?: DrawLimits;
  /** Every day through the scheduler's daily pass, none in catch-up runs (slower; see dailyPath). */
  everyDay?: boolean;
  /** Keep the schemas and the configuration folder (their names are logged) for a look afterwards. */
  keep?: boolean;
  log?: (line: string) => void;
}

/** The clock of the daily pass that judges `day`: 06:30 local the next morning (the default schedule). */
export function passClock(scenario: Scenario, day: string): Date {
  return new Date(dayStart(addDays(day, 1), scenario.timezone).getTime() + 6.5 * 3600_000);
}

export async function replayScenario(seed: number, options: ReplayOptions): Promise<ScenarioRun> {
  const scenario = drawScenario(seed, options.limits ?? FULL_RANGE);
  const log = options.log ?? (() => undefined);
  const schema = `eval_${seed}_${randomBytes(3).toString('hex')}`;
  const dir = await mkdtemp(join(tmpdir(), `plumbline-eval-${seed}-`));
  const pool = new pg.Pool({ connectionString: options.url, max: 2, application_name: 'plumbline-evaluate' });
  let rt: Runtime | undefined;
  try {
    await pool.query(`create schema ${quoteIdent(schema)}`);
    const config = await writeScenarioConfig(scenario, dir, schema, options.url);
    let started = performance.now();
    const events = await generateEvents(pool, scenario, schema);
    const generate = (performance.now() - started) / 1000;
    log(`seed ${seed}: ${scenario.app}, ${scenario.days} days, ${events} events in ${generate.toFixed(0)} s (schema ${schema})`);

    rt = await openRuntime(config, { env: { [EVAL_URL_VARIABLE]: options.url }, log: createLogger({ level: 'error' }), poolSize: 3 });
    started = performance.now();
    // The install: `plumbline run --from --to` over the first days, on the morning after the last of them.
    const installedTo = dayOf(scenario, scenario.backfillDays - 1);
    await runRange(rt, scenario.from, installedTo, { json: true, now: passClock(scenario, installedTo) });
    const backfill = (performance.now() - started) / 1000;

    started = performance.now();
    const passes = await dailyPath(rt, pool, scenario, schema, options.everyDay ?? false);
    const daily = (performance.now() - started) / 1000;
    log(`seed ${seed}: backfill ${backfill.toFixed(0)} s, ${scenario.days - scenario.backfillDays} days after it (${passes} daily passes) ${daily.toFixed(0)} s`);

    return {
      seed,
      summary: {
        app: scenario.app,
        timezone: scenario.timezone,
        from: scenario.from,
        to: lastDay(scenario),
        days: scenario.days,
        backfillDays: scenario.backfillDays,
        journeysPerDay: scenario.journeysPerDay,
        platforms: scenario.platforms.map((p) => `${p.id} (${p.raw.map((r) => r.value).join('/')}${p.versionFormat ? `, ${p.releases.length} releases` : ', no versions'})`),
        flows: scenario.flows.map((f) => ({ id: f.id, steps: f.steps.length })),
        dimensions: scenario.dimensions.map((d) => `${d.name} (${d.values.length})`),
        events,
      },
      truths: scenario.truths,
      ...(await observe(rt, scenario)),
      seconds: { generate, backfill, daily },
    };
  } finally {
    await rt?.close();
    if (options.keep) log(`seed ${seed}: kept schemas ${schema} and ${schema}_state, configuration in ${dir}`);
    else {
      await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
      await pool.query(`drop schema if exists ${quoteIdent(`${schema}_state`)} cascade`);
      await rm(dir, { recursive: true, force: true });
    }
    await pool.end();
  }
}

/** Days a catch-up run judges at most in one go. */
const CATCH_UP_DAYS = 7;

/**
 * The days after the install, in order. A day goes through the scheduler's
 * daily pass (`Runner.daily` with its clock at 06:30 the next morning: late-row
 * probe, rollup, judgement, retry of held-back days) when it matters: late rows
 * arrive on it, an earlier day was held back (not ready), or it is the newest
 * day. The days between are judged in runs of up to a week through the same
 * rollup and judging functions `plumbline run --from --to` uses, which the
 * pipeline guarantees to equal one daily run per day when no rows arrive
 * late (judgeDays; test/demo/end-to-end.test.ts checks it): about twice as fast, as history is loaded once
 * per run. `everyDay` sends every day through the daily pass. Returns the
 * number of daily passes.
 */
async function dailyPath(rt: Runtime, pool: pg.Pool, scenario: Scenario, schema: string, everyDay: boolean): Promise<number> {
  const arrivals = new Set(scenario.injections.flatMap((i) => (i.kind === 'late_rows' ? [i.arrives] : [])));
  const clock = (day: string) => passClock(scenario, day);
  let now = new Date(0);
  const runner = new Runner(rt, { clock: () => now, recheckAfterSeconds: 0, metrics: createMetrics({ processMetrics: false }) });
  let pending: string[] = [];
  let heldBack = false;
  let passes = 0;
  const flush = async () => {
    if (pending.length === 0) return;
    await rollupRange(rt, pending);
    await judgeDays(rt, pending, clock);
    heldBack = await anyHeldBack(rt, pending[0]!);
    pending = [];
  };
  for (let index = scenario.backfillDays; index < scenario.days; index++) {
    const day = dayOf(scenario, index);
    if (!everyDay && !arrivals.has(index) && !heldBack && index < scenario.days - 1) {
      pending.push(day);
      if (pending.length >= CATCH_UP_DAYS) await flush();
      continue;
    }
    await flush();
    await pool.query(arriveQuery(scenario, schema, index));
    now = clock(day);
    const pass = await runner.daily('schedule');
    passes++;
    if (pass.status !== 'done') throw new Error(`seed ${scenario.seed}: the daily pass for ${day} ended ${pass.status}: ${pass.error ?? ''}`);
    heldBack = await anyHeldBack(rt, addDays(day, -CATCH_UP_DAYS));
  }
  await flush();
  return passes;
}

/** Whether a day since `from` is held back (not ready): the next daily pass tries it again. */
async function anyHeldBack(rt: Runtime, from: string): Promise<boolean> {
  const { rows } = await rt.state.query<{ held: boolean }>({
    text: `select exists (select 1 from ${quoteIdent(rt.stateSchema)}.judged_days where verdict = 'not_ready' and day >= $1) as held`,
    values: [from],
  });
  return rows[0]!.held;
}

async function observe(rt: Runtime, scenario: Scenario): Promise<Pick<ScenarioRun, 'incidents' | 'coldStart' | 'judgedDays'>> {
  const from = scenario.from;
  const to = lastDay(scenario);
  const flows = scenario.flows.map((f) => f.id);
  const stored = await listIncidents(rt.state, rt.stateSchema, { flows, from, to });
  const sightings = await latestSightings(rt.state, rt.stateSchema, stored.map((i) => i.id));
  const { rows: opened } = await rt.state.query<{ id: string }>({
    text: `select distinct incident_id as id from ${quoteIdent(rt.stateSchema)}.outbox where event = 'opened'`,
    values: [],
  });
  const chat = new Set(opened.map((row) => row.id));
  const incidents = stored.map((i): ObservedIncident => {
    const cause = sightings.get(i.id)?.cause;
    return {
      id: i.id,
      flow: i.flow,
      flows: i.flows,
      platform: i.platform,
      version: i.version,
      causeLabel: i.causeLabel,
      severity: i.severity,
      muted: i.muted,
      chat: chat.has(i.id),
      openedDay: i.openedDay,
      lastSeenDay: i.lastSeenDay,
      resolvedDay: i.resolvedDay,
      subject: i.subject,
      title: i.title,
      sentence: cause?.sentence ?? '',
      segment: cause?.segment ? { dimension: cause.segment.dimension, value: cause.segment.value } : null,
    };
  });
  const coldEnd = dayOf(scenario, COLD_START_DAYS - 1);
  const { rows: findings } = await rt.state.query<ObservedFinding>(findingsQuery(rt.stateSchema, from, coldEnd));
  const coldStart = findings
    .filter((f) => f.check !== 'freshness')
    .map((f) => ({ flow: f.flow, day: f.day, check: f.check, kind: f.kind, platform: f.platform, severity: f.severity, message: f.message }));
  const { rows: verdicts } = await rt.state.query<{ flow: string; day: string; verdict: string }>(judgedDaysQuery(rt.stateSchema, from, to));
  const judgedDays: Record<string, string[]> = Object.fromEntries(flows.map((f) => [f, []]));
  for (const v of verdicts) if (v.verdict === 'judged') judgedDays[v.flow]?.push(v.day);
  return { incidents, coldStart, judgedDays };
}
