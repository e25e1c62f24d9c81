import type pg from 'pg';
import type { CalendarDay, CheckInput, DayStatusRow, EventDayRow, FlowDefinition, FunnelDayRow, ParamDayRow, StepDayRow } from '../../checks/types.js';
import { addDays, expandCalendar } from '../config/definitions.js';
import type { CalendarEntry } from '../config/schema.js';
import { quoteIdent } from '../db/sql.js';
import { selectDayStatus, selectEventDays, selectFunnelDays, selectParamDays, selectStepDays } from '../state/rollups.js';

/** Rollup rows of one flow over a range of days, loaded once and sliced per judged day. */
export interface FlowHistory {
  flow: FlowDefinition;
  from: string;
  to: string;
  events: EventDayRow[];
  params: ParamDayRow[];
  funnel: FunnelDayRow[];
  steps: StepDayRow[];
  status: DayStatusRow[];
  calendar: CalendarDay[];
}

export async function loadHistory(
  state: pg.Pool | pg.ClientBase,
  schema: string,
  flow: FlowDefinition,
  calendar: readonly CalendarEntry[],
  from: string,
  to: string,
): Promise<FlowHistory> {
  // One after another: a backtest reads through the single client of its transaction.
  const events = await state.query<EventDayRow>(selectEventDays(schema, from, to, flow.events));
  const params = await state.query<ParamDayRow>(selectParamDays(schema, from, to, flow.events));
  const funnel = await state.query<FunnelDayRow>(selectFunnelDays(schema, from, to, flow.id));
  const steps = await state.query<StepDayRow>(selectStepDays(schema, from, to, flow.id));
  const status = await state.query<Omit<DayStatusRow, 'newestAt' | 'rolledUpAt'> & { newestAt: Date | null; rolledUpAt: Date }>(
    selectDayStatus(schema, from, to),
  );
  return {
    flow,
    from,
    to,
    events: events.rows,
    params: params.rows,
    funnel: funnel.rows,
    steps: steps.rows,
    status: status.rows.map((row) => ({ ...row, newestAt: row.newestAt?.toISOString() ?? null, rolledUpAt: row.rolledUpAt.toISOString() })),
    calendar: expandCalendar(calendar, from, to),
  };
}

/** The check input for `day`: the `historyDays` days ending with it. Rows must be sorted by day. */
export function sliceInput(
  history: FlowHistory,
  day: string,
  historyDays: number,
  anomalous: Record<string, string[]>,
  now: string,
  timezone: string,
  hideValues = false,
): CheckInput {
  const from = addDays(day, -(historyDays - 1));
  // Rows come sorted by day: the window is one slice, found by binary search.
  const within = <T extends { day: string }>(rows: T[]) => rows.slice(firstAtOrAfter(rows, from), firstAtOrAfter(rows, addDays(day, 1)));
  const days: string[] = [];
  for (let d = from; d <= day; d = addDays(d, 1)) days.push(d);
  return {
    flow: history.flow,
    day,
    days,
    events: within(history.events),
    params: within(history.params),
    funnel: within(history.funnel),
    steps: within(history.steps),
    status: within(history.status),
    calendar: within(history.calendar),
    anomalous,
    now,
    timezone,
    hideValues,
  };
}

function firstAtOrAfter(rows: ReadonlyArray<{ day: string }>, day: string): number {
  let lo = 0;
  let hi = rows.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (rows[mid]!.day < day) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Days earlier runs judged anomalous, per series, for baselines to leave out. */
export async function loadAnomalousDays(state: pg.Pool | pg.ClientBase, schema: string, flow: string, from: string, before: string): Promise<Record<string, string[]>> {
  const { rows } = await state.query<{ series_key: string; days: string[] }>({
    text: `select series_key, array_agg(to_char(day, 'YYYY-MM-DD') order by day) as days
      from ${quoteIdent(schema)}.findings where flow = $1 and day >= $2 and day < $3 group by series_key`,
    values: [flow, from, before],
  });
  return Object.fromEntries(rows.map((row) => [row.series_key, row.days]));
}
