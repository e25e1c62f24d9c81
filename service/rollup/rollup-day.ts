import type pg from 'pg';
import type { FlowDefinition, FunnelDayRow, StepDayRow } from '../../checks/types.js';
import type { Query } from '../db/sql.js';
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
  type ParamRowToWrite,
} from '../state/rollups.js';
import {
  LOW_CARDINALITY,
  dayBounds,
  dayStatusQuery,
  eventCountsQuery,
  flowQuery,
  paramProfileQuery,
  type WarehouseMapping,
} from '../warehouse/queries.js';

export interface RollupContext {
  warehouse: pg.Pool;
  state: pg.Pool;
  stateSchema: string;
  mapping: WarehouseMapping;
  timezone: string;
  flows: FlowDefinition[];
  /** PostgreSQL work_mem for the rollup statements, e.g. '256MB'. */
  workMem: string;
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

/** The warehouse statements of one day's rollup: counts, status, params and one per flow (funnel and step counts). */
export interface RollupStatements {
  counts: Query;
  status: Query;
  params: Query;
  flows: Array<{ name: string; query: Query }>;
}

export function rollupStatements(ctx: Pick<RollupContext, 'mapping' | 'flows'>, lo: Date, hi: Date, untrackedKeys: string[]): RollupStatements {
  const watched = [...new Set(ctx.flows.flatMap((flow) => flow.events))];
  return {
    counts: eventCountsQuery(ctx.mapping, lo, hi),
    status: dayStatusQuery(ctx.mapping, lo, hi),
    params: paramProfileQuery(ctx.mapping, lo, hi, watched, untrackedKeys),
    flows: ctx.flows.map((flow) => ({ name: `flow ${flow.id}`, query: flowQuery(ctx.mapping, flow, lo, hi) })),
  };
}

/** Keys known to have too many values to profile on `day` ("event.key"), from the state's recent param history. */
export async function readUntrackedKeys(ctx: Pick<RollupContext, 'state' | 'stateSchema'>, day: string): Promise<string[]> {
  const { rows } = await ctx.state.query<{ key: string }>(untrackedKeysQuery(ctx.stateSchema, day, UNTRACKED_LOOKBACK_DAYS, LOW_CARDINALITY));
  return rows.map((row) => row.key);
}

/**
 * Rolls up business day `day` from the warehouse into the state schema: event
 * counts, parameter profiles, every flow's funnel and step counts, and the
 * day's status. The warehouse statements run side by side on separate
 * connections; the state is replaced in one transaction, so a rerun of a day
 * replaces it exactly.
 */
export async function rollupDay(ctx: RollupContext, day: string): Promise<RollupResult> {
  const started = performance.now();
  const { rows: boundRows } = await ctx.warehouse.query<{ lo: Date; hi: Date }>(dayBounds(day, ctx.timezone));
  const { lo, hi } = boundRows[0]!;
  const statements = rollupStatements(ctx, lo, hi, await readUntrackedKeys(ctx, day));
  const timings: StatementTiming[] = [];
  const read = async <Row extends pg.QueryResultRow>(name: string, query: Query): Promise<Row[]> => {
    const { rows, millis } = await readWarehouse<Row>(ctx, query);
    timings.push({ name, millis });
    return rows;
  };

  const [counts, status, params, flowResults] = await Promise.all([
    read<CountRow>('counts', statements.counts),
    read<StatusRow>('status', statements.status),
    read<ParamRow>('params', statements.params),
    Promise.all(statements.flows.map((flow) => read<FlowRow>(flow.name, flow.query))),
  ]);
  const funnels = flowResults.map((rows) => rows.filter((row): row is FunnelRow => row.kind === 'funnel'));
  const stepCounts = flowResults.map((rows) => rows.filter((row): row is StepCountRow => row.kind === 'step'));

  const hours = Math.round((hi.getTime() - lo.getTime()) / 3_600_000);
  const statusRows = summariseStatus(status, hours);
  const paramRows: ParamRowToWrite[] = params.map((row) => ({
    event: row.event,
    platform: row.platform,
    version: row.version,
    key: row.key,
    jsonType: row.json_type,
    events: Number(row.events),
    distinctValues: row.distinct_values,
    topValues: row.top_values.map((top) => ({ value: top.value, events: Number(top.events) })),
    minNumber: row.min_number,
    maxNumber: row.max_number,
    fractional: Number(row.fractional),
  }));
  const funnelRows = ctx.flows.flatMap((flow, index) => unpivotFunnel(flow.id, funnels[index]!));
  const stepRows: Omit<StepDayRow, 'day'>[] = ctx.flows.flatMap((flow, index) =>
    stepCounts[index]!.map((row) => ({ flow: flow.id, step: row.step, platform: row.platform, version: row.version, events: Number(row.events), people: Number(row.people) })),
  );

  const client = await ctx.state.connect();
  try {
    await client.query('begin');
    await client.query(deleteDay(ctx.stateSchema, 'event_days', day));
    await client.query(
      insertEventDays(
        ctx.stateSchema,
        day,
        counts.map((row) => ({ ...row, events: Number(row.events), people: Number(row.people) })),
      ),
    );
    await client.query(deleteDay(ctx.stateSchema, 'param_days', day));
    await client.query(insertParamDays(ctx.stateSchema, day, paramRows));
    for (const flow of ctx.flows) {
      await client.query(deleteFlowDay(ctx.stateSchema, 'funnel_days', day, flow.id));
      await client.query(deleteFlowDay(ctx.stateSchema, 'step_days', day, flow.id));
    }
    await client.query(insertFunnelDays(ctx.stateSchema, day, funnelRows));
    await client.query(insertStepDays(ctx.stateSchema, day, stepRows));
    await client.query(upsertDayStatus(ctx.stateSchema, day, statusRows));
    await client.query(deleteStatusExcept(ctx.stateSchema, day, statusRows.map((row) => row.platform)));
    await client.query('commit');
  } catch (error) {
    await client.query('rollback');
    throw error;
  } finally {
    client.release();
  }
  return {
    day,
    events: statusRows.reduce((sum, row) => sum + row.events, 0),
    eventRows: counts.length,
    paramRows: paramRows.length,
    funnelRows: funnelRows.length,
    millis: performance.now() - started,
    statements: timings,
  };
}

/**
 * Runs one read-only statement with the rollup's session settings on a
 * connection of its own; `millis` is the statement's wall time, settings
 * excluded.
 */
export async function readWarehouse<Row extends pg.QueryResultRow>(
  ctx: Pick<RollupContext, 'warehouse' | 'workMem'>,
  query: Query,
): Promise<{ rows: Row[]; millis: number }> {
  const client = await ctx.warehouse.connect();
  try {
    await client.query('begin read only');
    // JIT compilation of these wide expressions costs seconds and saves nothing on one pass over a day.
    await client.query({ text: `select set_config('work_mem', $1, true), set_config('jit', 'off', true)`, values: [ctx.workMem] });
    const started = performance.now();
    const { rows } = await client.query<Row>(query);
    const millis = performance.now() - started;
    await client.query('commit');
    return { rows, millis };
  } catch (error) {
    await client.query('rollback').catch(() => undefined);
    throw error;
  } finally {
    client.release();
  }
}

interface CountRow {
  event: string;
  platform: string;
  version: string;
  dimension: string;
  value: string;
  events: string;
  people: string;
}
interface StatusRow {
  platform: string;
  hour: number;
  events: string;
  newest_at: Date;
}
interface ParamRow {
  event: string;
  platform: string;
  version: string;
  key: string;
  json_type: string;
  events: string;
  distinct_values: number | null;
  top_values: Array<{ value: string; events: number }>;
  min_number: number | null;
  max_number: number | null;
  fractional: string;
}
interface StepCountRow {
  kind: 'step';
  platform: string;
  version: string;
  step: number;
  events: string;
  people: string;
}
interface FunnelRow {
  kind: 'funnel';
  platform: string;
  version: string;
  dimension: string;
  value: string;
  entered: string[];
  reached: string[];
  seconds_median: Array<number | null>;
  seconds_p90: Array<number | null>;
  timed: string[];
}

type FlowRow = FunnelRow | StepCountRow;

function summariseStatus(rows: StatusRow[], hours: number) {
  const byPlatform = new Map<string, { platform: string; events: number; newestAt: string | null; hourly: number[] }>();
  for (const row of rows) {
    let entry = byPlatform.get(row.platform);
    if (!entry) {
      entry = { platform: row.platform, events: 0, newestAt: null, hourly: new Array<number>(hours).fill(0) };
      byPlatform.set(row.platform, entry);
    }
    const events = Number(row.events);
    entry.events += events;
    entry.hourly[row.hour] = (entry.hourly[row.hour] ?? 0) + events;
    const newest = row.newest_at.toISOString();
    if (entry.newestAt === null || newest > entry.newestAt) entry.newestAt = newest;
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
      entered: Number(row.entered[step]),
      reached: Number(reached),
      secondsMedian: row.seconds_median[step] ?? null,
      secondsP90: row.seconds_p90[step] ?? null,
      timed: Number(row.timed[step]),
    })),
  );
}
