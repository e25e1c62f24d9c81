/**
 * The warehouse seam: what the rollup, the late-row probe and the freshness
 * status ask of the team's events table, whatever engine holds it. Each
 * engine (`postgres/`, `clickhouse/`) answers with its own dialect of the same
 * statements and returns these rows, so the meaning of every figure is the
 * engine's business and nothing above this file knows which one runs.
 * plumbline's own state always stays in PostgreSQL.
 */
import type { EventDayRow, FunnelDayRow, ParamDayRow, StepDayRow } from '../../checks/types.js';
import type { FlowDefinition } from '../../checks/types.js';
import type { BadRowReason, RowLimits, SeenCounts } from './mapping.js';

export const WAREHOUSE_ENGINES = ['postgres', 'clickhouse'] as const;
export type WarehouseEngine = (typeof WAREHOUSE_ENGINES)[number];

/** A business day as instants: [lo, hi), 23, 24 or 25 hours apart. */
export interface DayRange {
  lo: Date;
  hi: Date;
}

export type EventCountRow = Omit<EventDayRow, 'day'>;
export type ParamProfileRow = Omit<ParamDayRow, 'day' | 'eventTotal'>;
export type StepCountRow = Omit<StepDayRow, 'day' | 'flow'>;

/** Events per platform and local hour of the day (hour 0 starts at local midnight), with the newest event. */
export interface HourCountRow {
  platform: string;
  hour: number;
  /** Events, less the set-aside rows. */
  events: number;
  /** Null when every row of the hour was set aside. */
  newestAt: Date | null;
  /** Rows of the hour per bad-row reason (see BAD_ROW_REASONS in mapping.ts). */
  badRows: Record<BadRowReason, number>;
}

/** One funnel grouping (platform x version, or platform x dimension value), every step at once. */
export interface FunnelRow extends Pick<FunnelDayRow, 'platform' | 'version' | 'dimension' | 'value'> {
  entered: number[];
  reached: number[];
  secondsMedian: Array<number | null>;
  secondsP90: Array<number | null>;
  timed: number[];
}

/** One flow on the day: its funnel and its step counts, from one statement. */
export interface FlowRows {
  funnel: FunnelRow[];
  steps: StepCountRow[];
}

export interface ProbeCountRow {
  day: string;
  platform: string;
  events: number;
}

/** A statement's rows within the row limits, with the distinct values it saw (mapping.ts, ROW_LIMITS). */
export interface Limited<Row> {
  rows: Row[];
  seen: SeenCounts;
  /** The limits the statement applied. */
  limits: RowLimits;
}

export interface Warehouse {
  readonly engine: WarehouseEngine;
  /** Start and end of business day `day` (ISO date) in the IANA `timezone`. */
  dayBounds(day: string, timezone: string): Promise<DayRange>;
  /** Events and distinct people per event x platform x version, x platform, and x dimension value; `keep`: events kept whatever the limit on event names. */
  eventCounts(range: DayRange, keep: string[]): Promise<Limited<EventCountRow>>;
  /** The freshness status: events per platform and local hour, the newest event, and bad rows (parameter reasons counted on `events`). */
  hourCounts(range: DayRange, events: string[]): Promise<HourCountRow[]>;
  /** Parameter profiles of the watched events; `untrackedKeys` ("event.key") are counted without grouping their values. */
  paramProfiles(range: DayRange, events: string[], untrackedKeys: string[]): Promise<Limited<ParamProfileRow>>;
  /** The flow's ordered funnel for the cohort entering on the day, and its step counts in any order. */
  flow(flow: FlowDefinition, range: DayRange): Promise<FlowRows>;
  /** Event counts per platform of past days, to spot late rows that restate them. */
  probeCounts(days: Array<{ day: string } & DayRange>): Promise<ProbeCountRow[]>;
  close(): Promise<void>;
}
