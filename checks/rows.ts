/**
 * Views of a check input's rows that several checks and the cause analysis
 * read over and over: the platform totals (all versions, no dimension) and
 * every row grouped by day. Built once per input and kept while the input
 * lives, so a day's judgement scans the history a handful of times, not once
 * per series.
 */
import { ALL_VERSIONS, type CheckInput, type Day, type EventDayRow, type FunnelDayRow, type StepDayRow } from './types.js';

export interface Totals {
  events: EventDayRow[];
  funnel: FunnelDayRow[];
  steps: StepDayRow[];
}

export interface ByDay {
  events: Map<Day, EventDayRow[]>;
  funnel: Map<Day, FunnelDayRow[]>;
  steps: Map<Day, StepDayRow[]>;
}

const totalsCache = new WeakMap<CheckInput, Totals>();
const byDayCache = new WeakMap<CheckInput, ByDay>();

/** Rows of platform totals: version '*' and no dimension breakdown. */
export function platformTotals(input: CheckInput): Totals {
  let totals = totalsCache.get(input);
  if (!totals) {
    const isTotal = (row: { version: string; dimension?: string }) => row.version === ALL_VERSIONS && (row.dimension ?? '') === '';
    totals = { events: input.events.filter(isTotal), funnel: input.funnel.filter(isTotal), steps: input.steps.filter(isTotal) };
    totalsCache.set(input, totals);
  }
  return totals;
}

function groupByDay<R extends { day: Day }>(rows: readonly R[]): Map<Day, R[]> {
  const groups = new Map<Day, R[]>();
  for (const row of rows) {
    const group = groups.get(row.day);
    if (group) group.push(row);
    else groups.set(row.day, [row]);
  }
  return groups;
}

/** Every row of the input, grouped by day. */
export function rowsByDay(input: CheckInput): ByDay {
  let byDay = byDayCache.get(input);
  if (!byDay) {
    byDay = { events: groupByDay(input.events), funnel: groupByDay(input.funnel), steps: groupByDay(input.steps) };
    byDayCache.set(input, byDay);
  }
  return byDay;
}
