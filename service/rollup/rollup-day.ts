import type pg from 'pg';
import type { FlowDefinition, FunnelDayRow, StepDayRow } from '../../checks/types.js';
import { withTransaction } from '../db/tx.js';
import {
  deleteDay,
  deleteFlowDay,
  deleteStatusExcept,
  insertEventDays,
  insertFunnelDays,
  insertParamDays,
  insertStepDays,
  untrackedKeysQuery,
  upsertDayStatus,
} from '../state/rollups.js';
import type { DayRange, FunnelRow, HourCountRow, Limited, Warehouse } from '../warehouse/engine.js';
import { LOW_CARDINALITY, ROW_LIMITS } from '../warehouse/mapping.js';
import { guardProfiles } from './value-guard.js';

export interface RollupContext {
  /** The team's events, through the warehouse seam (any engine). */
  warehouse: Warehouse;
  state: pg.Pool;
  stateSchema: string;
  timezone: string;
  flows: FlowDefinition[];
  /** `delivery.hide_keys`: parameter keys whose values are never kept. */
  hiddenKeys?: readonly string[];
}

export interface RollupResult {
  day: string;
  events: number;
  eventRows: number;
  paramRows: number;
  funnelRows: number;
  millis: number;
  /** Wall time of each warehouse statement, measured while they ran side by side. */
  statements: StatementTiming[];
}

export interface StatementTiming {
  name: string;
  millis: number;
}

/** Days of param history consulted to know which keys have too many values to profile. */
const UNTRACKED_LOOKBACK_DAYS = 14;

/** Every event a flow watches: the events whose parameters are profiled. */
export function watchedEvents(flows: FlowDefinition[]): string[] {
  return [...new Set(flows.flatMap((flow) => flow.events))];
}

/** Keys known to have too many values to profile on `day` ("event.key"), from the state's recent param history. */
export async function readUntrackedKeys(ctx: Pick<RollupContext, 'state' | 'stateSchema'>, day: string): Promise<string[]> {
  const { rows } = await ctx.state.query<{ key: string }>(untrackedKeysQuery(ctx.stateSchema, day, UNTRACKED_LOOKBACK_DAYS, LOW_CARDINALITY));
  return rows.map((row) => row.key);
}

/**
 * Rolls up business day `day` from the warehouse into the state schema: event
 * counts, parameter profiles, every flow's funnel and step counts, and the
 * day's status. The warehouse statements are sent side by side (PostgreSQL
 * runs them on separate connections, a ClickHouse server in parallel, the
 * in-process engine one at a time); the state is replaced in one
 * transaction, so a rerun of a day replaces it exactly.
 */
export async function rollupDay(ctx: RollupContext, day: string): Promise<RollupResult> {
  const started = performance.now();
  const range = await ctx.warehouse.dayBounds(day, ctx.timezone);
  const untracked = await readUntrackedKeys(ctx, day);
  const timings: StatementTiming[] = [];
  const timed = async <T>(name: string, read: () => Promise<T>): Promise<T> => {
    const t0 = performance.now();
    const result = await read();
    timings.push({ name, millis: performance.now() - t0 });
    return result;
  };

  const { warehouse } = ctx;
  const [counts, hours, params, flows] = await Promise.all([
    timed('counts', () => warehouse.eventCounts(range, watchedEvents(ctx.flows))),
    timed('status', () => warehouse.hourCounts(range, watchedEvents(ctx.flows))),
    timed('params', () => warehouse.paramProfiles(range, watchedEvents(ctx.flows), untracked)),
    Promise.all(ctx.flows.map((flow) => timed(`flow ${flow.id}`, () => warehouse.flow(flow, range)))),
  ]);

  const statusRows = summariseStatus(hours, range).map((row) => ({ ...row, overLimits: overLimits([counts, params], row.platform) }));
  const profiles = guardProfiles(params.rows, ctx.hiddenKeys ?? []);
  const funnelRows = ctx.flows.flatMap((flow, index) => unpivotFunnel(flow.id, flows[index]!.funnel));
  const stepRows: Omit<StepDayRow, 'day'>[] = ctx.flows.flatMap((flow, index) => flows[index]!.steps.map((row) => ({ flow: flow.id, ...row })));

  await withTransaction(ctx.state, async (client) => {
    await client.query(deleteDay(ctx.stateSchema, 'event_days', day));
    await client.query(insertEventDays(ctx.stateSchema, day, counts.rows));
    await client.query(deleteDay(ctx.stateSchema, 'param_days', day));
    await client.query(insertParamDays(ctx.stateSchema, day, profiles));
    for (const flow of ctx.flows) {
      await client.query(deleteFlowDay(ctx.stateSchema, 'funnel_days', day, flow.id));
      await client.query(deleteFlowDay(ctx.stateSchema, 'step_days', day, flow.id));
    }
    await client.query(insertFunnelDays(ctx.stateSchema, day, funnelRows));
    await client.query(insertStepDays(ctx.stateSchema, day, stepRows));
    await client.query(upsertDayStatus(ctx.stateSchema, day, statusRows));
    await client.query(deleteStatusExcept(ctx.stateSchema, day, statusRows.map((row) => row.platform)));
  });
  return {
    day,
    events: statusRows.reduce((sum, row) => sum + row.events, 0),
    eventRows: counts.rows.length,
    paramRows: profiles.length,
    funnelRows: funnelRows.length,
    millis: performance.now() - started,
    statements: timings,
  };
}

/** The limits a platform reached on the day: distinct values seen (the most any statement saw) against those kept. */
function overLimits(statements: Array<Limited<unknown>>, platform: string): Record<string, { seen: number; kept: number }> {
  const reached: Record<string, { seen: number; kept: number }> = {};
  for (const { seen, limits } of statements) {
    for (const limit of ROW_LIMITS) {
      const most = seen.get(platform)?.[limit] ?? 0;
      if (most > limits[limit] && most > (reached[limit]?.seen ?? 0)) reached[limit] = { seen: most, kept: limits[limit] };
    }
  }
  return reached;
}

/** Per platform: the day's events, the newest event, events per local hour (23, 24 or 25 of them) and bad rows per reason. */
function summariseStatus(rows: HourCountRow[], range: DayRange) {
  const hours = Math.round((range.hi.getTime() - range.lo.getTime()) / 3_600_000);
  const byPlatform = new Map<string, { platform: string; events: number; newestAt: string | null; hourly: number[]; badRows: Record<string, number> }>();
  for (const row of rows) {
    let entry = byPlatform.get(row.platform);
    if (!entry) {
      entry = { platform: row.platform, events: 0, newestAt: null, hourly: new Array<number>(hours).fill(0), badRows: {} };
      byPlatform.set(row.platform, entry);
    }
    entry.events += row.events;
    entry.hourly[row.hour] = (entry.hourly[row.hour] ?? 0) + row.events;
    for (const [reason, count] of Object.entries(row.badRows)) if (count > 0) entry.badRows[reason] = (entry.badRows[reason] ?? 0) + count;
    const newest = row.newestAt?.toISOString() ?? null;
    if (newest !== null && (entry.newestAt === null || newest > entry.newestAt)) entry.newestAt = newest;
  }
  return [...byPlatform.values()];
}

function unpivotFunnel(flow: string, rows: FunnelRow[]): Omit<FunnelDayRow, 'day'>[] {
  return rows.flatMap((row) =>
    row.reached.map((reached, step) => ({
      flow,
      platform: row.platform,
      version: row.version,
      dimension: row.dimension,
      value: row.value,
      step,
      entered: row.entered[step]!,
      reached,
      secondsMedian: row.secondsMedian[step] ?? null,
      secondsP90: row.secondsP90[step] ?? null,
      timed: row.timed[step]!,
    })),
  );
}
