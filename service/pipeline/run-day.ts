import { analyseCauses } from '../../checks/causes/index.js';
import type { IncidentDraft } from '../../checks/causes/types.js';
import { dayEnd } from '../../checks/time.js';
import type pg from 'pg';
import { addDays } from '../config/definitions.js';
import type { FlowConfig } from '../config/schema.js';
import { quoteIdent } from '../db/sql.js';
import { withTransaction } from '../db/tx.js';
import { rollupDay, type RollupContext, type RollupResult } from '../rollup/rollup-day.js';
import type { DayRange } from '../warehouse/engine.js';
import type { Runtime } from '../runtime.js';
import { announceChanges } from '../delivery/announce.js';
import { applyIncidentDrafts, incidentPolicy } from '../incidents/apply.js';
import { openSeries } from '../incidents/store.js';
import { storeJudgement } from '../state/findings.js';
import { historyStart, loadAnomalousDays, loadHistory, sliceInput } from './history.js';
import { judgeDay, type Judgement } from './judge.js';

export interface FlowJudgement extends Judgement {
  flow: string;
  day: string;
  incidents: IncidentDraft[];
}

export interface RunOptions {
  /** The run's clock; checks never read the real one. */
  now: Date;
  onProgress?: (done: number, total: number, label: string) => void;
}

export function rollupContext(rt: Runtime): RollupContext {
  return { warehouse: rt.warehouse, state: rt.state, stateSchema: rt.stateSchema, timezone: rt.timezone, flows: rt.flows, hiddenKeys: rt.config.main.delivery.hide_keys };
}

/** Rolls up a range of days, two at a time (one per core of a small machine). */
export async function rollupRange(rt: Runtime, days: string[], options: Pick<RunOptions, 'onProgress'> = {}): Promise<RollupResult[]> {
  const results: RollupResult[] = [];
  const queue = [...days];
  const ctx = rollupContext(rt);
  const worker = async () => {
    for (let day = queue.shift(); day !== undefined; day = queue.shift()) {
      results.push(await recordRun(rt, 'rollup', day, null, () => rollupDay(ctx, day)));
      options.onProgress?.(results.length, days.length, `rolled up ${day}`);
    }
  };
  await Promise.all([worker(), worker()]);
  return results.sort((a, b) => a.day.localeCompare(b.day));
}

/**
 * Re-counts the recent past days per platform and rolls up again those whose
 * counts changed since their rollup (late rows), so baselines see the truth.
 */
export async function probeRestatements(rt: Runtime, day: string): Promise<string[]> {
  const lookback = rt.config.main.judging.restatement_days;
  if (lookback === 0) return [];
  const days: Array<{ day: string } & DayRange> = [];
  for (let i = lookback; i >= 1; i--) {
    const past = addDays(day, -i);
    days.push({ day: past, ...(await rt.warehouse.dayBounds(past, rt.timezone)) });
  }
  const counts = await rt.warehouse.probeCounts(days);
  const { rows: known } = await rt.state.query<{ day: string; platform: string; events: string }>({
    text: `select to_char(day, 'YYYY-MM-DD') as day, platform, events from ${quoteIdent(rt.stateSchema)}.day_status where day >= $1 and day < $2`,
    values: [days[0]!.day, day],
  });
  const key = (row: { day: string; platform: string }) => `${row.day}|${row.platform}`;
  const before = new Map(known.map((row) => [key(row), Number(row.events)]));
  const now = new Map(counts.map((row) => [key(row), row.events]));
  const changed = new Set<string>();
  for (const k of new Set([...before.keys(), ...now.keys()])) {
    const [pastDay] = k.split('|');
    // A day never rolled up is not a restatement; backfills handle it.
    if (!known.some((row) => row.day === pastDay)) continue;
    if ((before.get(k) ?? 0) !== (now.get(k) ?? 0)) changed.add(pastDay!);
  }
  const restated = [...changed].sort();
  if (restated.length > 0) {
    rt.log.warn({ days: restated }, 'late rows changed already rolled-up days: rolling them up again');
    await rollupRange(rt, restated);
  }
  return restated;
}

/** Where judgements go: the live state schema by default, or a backtest's throw-away schema. */
export interface JudgeTarget {
  schema: string;
  /**
   * One client whose open transaction holds every write (a backtest rolls it
   * back); without it each judged day commits on its own, as a live run does.
   */
  client?: pg.ClientBase;
}

/**
 * Judges every flow on each of `days` (consecutive, oldest first) from the
 * stored rollups and stores the findings, incidents and messages. History is
 * loaded once per flow and sliced per day; findings of a day join the
 * anomalous days the next day's baselines leave out, exactly as separate
 * daily runs would see them. A day is judged for every flow before its
 * incidents are drawn, in one transaction: one cause seen by several flows
 * (a data delay) is one incident and one message. Live runs and backtests
 * share this code. `quiet`: incidents change, no message is queued (a
 * backfill's old days, see delivery/backfill.ts).
 */
export async function judgeDays(
  rt: Runtime,
  days: string[],
  clock: (day: string) => Date,
  target?: JudgeTarget,
  options: { quiet?: boolean; lateRows?: boolean } = {},
): Promise<FlowJudgement[]> {
  if (days.length === 0) return [];
  const historyDays = rt.config.main.judging.history_days;
  const results: FlowJudgement[] = [];
  const policy = incidentPolicy(rt.config.main);
  const writeSchema = target?.schema ?? rt.stateSchema;
  const reader = target?.client ?? rt.state;
  const write = async (work: (client: pg.ClientBase) => Promise<void>) => {
    if (target?.client) return work(target.client);
    return withTransaction(rt.state, work);
  };
  const loadFlow = async (config: FlowConfig) => {
    const flow = rt.flows.find((f) => f.id === config.flow)!;
    const calendar = [...rt.config.main.calendar, ...config.calendar];
    const from = await historyStart(reader, rt.stateSchema, flow, days[0]!, historyDays);
    const history = await loadHistory(reader, rt.stateSchema, flow, calendar, from, days[days.length - 1]!);
    // Days before the window keep the verdicts the live runs gave them.
    const anomalous = await loadAnomalousDays(reader, rt.stateSchema, flow.id, from, days[0]!);
    return { flow, config, history, anomalous };
  };
  const flows: Array<Awaited<ReturnType<typeof loadFlow>>> = [];
  for (const { config } of rt.config.flows) flows.push(await loadFlow(config));
  const flowIds = flows.map(({ flow }) => flow.id);
  for (const day of days) {
    const judge = async (): Promise<FlowJudgement[]> => {
      // Hysteresis: the series open incidents hold, whose checks say whether they are still outside their band.
      const open = await openSeries(reader, writeSchema, flowIds, day);
      const calendarFlows: string[] = [];
      const judged = flows.map(({ flow, config, history, anomalous }) => {
        const input = sliceInput(history, day, historyDays, anomalous, clock(day).toISOString(), rt.timezone, rt.config.main.delivery.hide_values, rt.config.main.judging.learning_days);
        input.open = open.get(flow.id) ?? [];
        if (input.calendar.some((entry) => entry.day === day)) calendarFlows.push(flow.id);
        const result = judgeDay(input, config);
        for (const { check, error } of result.errors) rt.log.error({ err: error, check, flow: flow.id, day }, 'check failed');
        return { flow: flow.id, day, ...result, incidents: analyseCauses(input, result.findings) };
      });
      // Findings, incidents and their messages change together or not at all.
      await write(async (client) => {
        for (const judgement of judged) await storeJudgement(client, writeSchema, judgement.flow, day, judgement.verdict, judgement.reason, judgement.findings);
        const holds = { outside: judged.flatMap((judgement) => judgement.outside), calendar: calendarFlows };
        const changes = await applyIncidentDrafts(client, writeSchema, flowIds, day, judged.flatMap((judgement) => judgement.incidents), policy, clock(day), { ...options, holds });
        await announceChanges(client, writeSchema, changes, policy, clock(day));
      });
      return judged;
    };
    const judged = target?.client ? await judge() : await recordRun(rt, 'judge', day, null, judge);
    judged.forEach((judgement, i) => {
      for (const finding of judgement.findings) (flows[i]!.anomalous[finding.seriesKey] ??= []).push(day);
    });
    results.push(...judged);
  }
  return results;
}

/**
 * The clock a day is judged by when it is replayed: the moment the daily run
 * would have judged it (local midnight after the day, plus the settle time).
 */
export function replayClock(rt: Runtime): (day: string) => Date {
  const settle = rt.config.main.judging.settle_time * 1000;
  return (day) => new Date(dayEnd(day, rt.timezone).getTime() + settle);
}

/**
 * The daily run for one business day: late-row probe, rollup, judgement. A
 * past day the probe found restated is judged again first, with its late
 * rows: incidents its first judgement opened on missing data close as late
 * data (applyIncidentDrafts).
 */
export async function runDay(rt: Runtime, day: string, options: RunOptions): Promise<{ restated: string[]; rollup: RollupResult; judgements: FlowJudgement[] }> {
  const restated = await probeRestatements(rt, day);
  for (const past of await judgedAmong(rt, restated)) await judgeDays(rt, [past], () => options.now, undefined, { lateRows: true });
  const [rollup] = await rollupRange(rt, [day]);
  const judgements = await judgeDays(rt, [day], () => options.now);
  return { restated, rollup: rollup!, judgements };
}

/** The days among `days` that were judged (not held back): those a restatement makes worth judging again. */
async function judgedAmong(rt: Runtime, days: string[]): Promise<string[]> {
  if (days.length === 0) return [];
  const { rows } = await rt.state.query<{ day: string }>({
    text: `select distinct to_char(day, 'YYYY-MM-DD') as day from ${quoteIdent(rt.stateSchema)}.judged_days where day = any($1::date[]) and verdict = 'judged' order by 1`,
    values: [days],
  });
  return rows.map((row) => row.day);
}

/** Records a unit of work in `runs`; a failure is stored and rethrown, never swallowed. */
async function recordRun<T>(rt: Runtime, kind: 'rollup' | 'judge', day: string, flow: string | null, work: () => Promise<T>): Promise<T> {
  const s = quoteIdent(rt.stateSchema);
  const { rows } = await rt.state.query<{ id: string }>({
    text: `insert into ${s}.runs (kind, day, flow, status, runner) values ($1, $2, $3, 'running', $4) returning id`,
    values: [kind, day, flow, runnerName()],
  });
  const id = rows[0]!.id;
  try {
    const result = await work();
    await rt.state.query({ text: `update ${s}.runs set status = 'done', finished_at = now() where id = $1`, values: [id] });
    return result;
  } catch (error) {
    await rt.state.query({
      text: `update ${s}.runs set status = 'failed', finished_at = now(), error = $2 where id = $1`,
      values: [id, (error as Error).message],
    });
    rt.log.error({ err: error, kind, day, flow }, 'run failed');
    throw error;
  }
}

export function runnerName(): string {
  return `${process.env.HOSTNAME ?? 'local'}:${process.pid}`;
}
