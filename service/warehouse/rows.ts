/**
 * The rows each dialect's statements return, as their drivers hand them over
 * (PostgreSQL's bigint and numeric arrive as text, ClickHouse's 64-bit
 * integers as numbers), turned into the seam's rows. Both dialects name
 * their columns alike, so one conversion serves both.
 */
import { BAD_ROW_REASONS, limitsOf, type BadRowReason, type RowLimit, type SeenCounts, type WarehouseMapping } from './mapping.js';
import type { EventCountRow, FlowRows, FunnelRow, HourCountRow, Limited, ParamProfileRow, ProbeCountRow, StepCountRow } from './engine.js';

type Count = string | number;

/** Distinct values the statement saw on the row's platform, per limit (null: none of that kind). */
export type RawSeen = Partial<Record<RowLimit, Count | null>>;

export interface RawCountRow extends RawSeen {
  event: string;
  platform: string;
  version: string;
  dimension: string;
  value: string;
  events: Count;
  people: Count;
}

export type RawHourRow = {
  platform: string;
  hour: number;
  events: Count;
  /** A Date from PostgreSQL; milliseconds since the epoch from ClickHouse; null when every row of the hour was set aside. */
  newest_at: Date | number | null;
} & Record<BadRowReason, Count>;

export interface RawParamRow extends RawSeen {
  event: string;
  platform: string;
  version: string;
  key: string;
  json_type: string;
  events: Count;
  distinct_values: Count | null;
  top_values: Array<{ value: string; events: Count }>;
  min_number: number | null;
  max_number: number | null;
  fractional: Count;
}

interface RawStepRow {
  kind: 'step';
  platform: string;
  version: string;
  step: number;
  events: Count;
  people: Count;
}

interface RawFunnelRow {
  kind: 'funnel';
  platform: string;
  version: string;
  dimension: string;
  value: string;
  entered: Count[];
  reached: Count[];
  seconds_median: Array<number | null>;
  seconds_p90: Array<number | null>;
  timed: Count[];
}

export type RawFlowRow = RawFunnelRow | RawStepRow;

export interface RawProbeRow {
  day: string;
  platform: string;
  events: Count;
}

/** The rows converted, and the largest count of distinct values per platform and limit the rows carry. */
export function limited<Raw extends RawSeen & { platform: string }, Row>(raw: Raw[], mapping: WarehouseMapping, bounded: readonly RowLimit[], convert: (row: Raw) => Row): Limited<Row> {
  const seen: SeenCounts = new Map();
  for (const row of raw) {
    const platform = seen.get(row.platform) ?? {};
    for (const limit of bounded) {
      const count = row[limit];
      if (count !== null && count !== undefined) platform[limit] = Math.max(platform[limit] ?? 0, Number(count));
    }
    seen.set(row.platform, platform);
  }
  return { rows: raw.map(convert), seen, limits: limitsOf(mapping) };
}

export function toEventCountRow(row: RawCountRow): EventCountRow {
  return { event: row.event, platform: row.platform, version: row.version, dimension: row.dimension, value: row.value, events: Number(row.events), people: Number(row.people) };
}

export function toHourCountRow(row: RawHourRow): HourCountRow {
  return {
    platform: row.platform,
    hour: Number(row.hour),
    events: Number(row.events),
    newestAt: row.newest_at === null ? null : new Date(row.newest_at),
    badRows: Object.fromEntries(BAD_ROW_REASONS.map((reason) => [reason, Number(row[reason])])) as Record<BadRowReason, number>,
  };
}

export function toParamProfileRow(row: RawParamRow): ParamProfileRow {
  return {
    event: row.event,
    platform: row.platform,
    version: row.version,
    key: row.key,
    jsonType: row.json_type,
    events: Number(row.events),
    distinctValues: row.distinct_values === null ? null : Number(row.distinct_values),
    topValues: row.top_values.map((top) => ({ value: top.value, events: Number(top.events) })),
    minNumber: row.min_number,
    maxNumber: row.max_number,
    fractional: Number(row.fractional),
  };
}

export function toFlowRows(rows: RawFlowRow[]): FlowRows {
  const funnel: FunnelRow[] = [];
  const steps: StepCountRow[] = [];
  for (const row of rows) {
    if (row.kind === 'step') {
      steps.push({ platform: row.platform, version: row.version, step: Number(row.step), events: Number(row.events), people: Number(row.people) });
    } else {
      funnel.push({
        platform: row.platform,
        version: row.version,
        dimension: row.dimension,
        value: row.value,
        entered: row.entered.map(Number),
        reached: row.reached.map(Number),
        secondsMedian: row.seconds_median,
        secondsP90: row.seconds_p90,
        timed: row.timed.map(Number),
      });
    }
  }
  return { funnel, steps };
}

export function toProbeCountRow(row: RawProbeRow): ProbeCountRow {
  return { day: row.day, platform: row.platform, events: Number(row.events) };
}
