import type pg from 'pg';
import type { CalendarDay, CheckInput, DayStatusRow, EventDayRow, FlowDefinition, FunnelDayRow, ParamDayRow, StepDayRow } from '../../checks/types.js';
import { addDays, daysBetween, expandCalendar } from '../config/definitions.js';
import type { CalendarEntry } from '../config/schema.js';
import { quoteIdent } from '../db/sql.js';
import { selectDataDaysStart, selectDayStatus, selectEventDays, selectFunnelDays, selectParamDays, selectStepDays } from '../state/rollups.js';

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
  /** Days on which any platform of the flow sent an event. */
  dataDays: Set<string>;
}

/**
 * Where the history of judged days from `firstJudged` on must start: the
 * usual `historyDays` before it, or earlier when a silence took some of those
 * days, so the first judged day still finds `historyDays` days with data.
 */
export async function historyStart(state: pg.Pool | pg.ClientBase, schema: string, flow: FlowDefinition, firstJudged: string, historyDays: number): Promise<string> {
  const usual = addDays(firstJudged, -(historyDays - 1));
  const { rows } = await state.query<{ day: string | null }>(selectDataDaysStart(schema, flow.platforms, firstJudged, historyDays - 1));
  const start = rows[0]?.day ?? null;
  return start !== null && start < usual ? start : usual;
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
  const platforms = new Set(flow.platforms);
  const dataDays = new Set(status.rows.filter((row) => row.events > 0 && platforms.has(row.platform)).map((row) => row.day));
  return {
    flow,
    from,
    to,
    dataDays,
    events: events.rows,
    params: params.rows,
    funnel: funnel.rows,
    steps: steps.rows,
    status: status.rows.map((row) => ({ ...row, newestAt: row.newestAt?.toISOString() ?? null, rolledUpAt: row.rolledUpAt.toISOString() })),
    calendar: expandCalendar(calendar, from, to),
  };
}

/**
 * The days of `day`'s window, oldest first: the `historyDays` days ending with
 * it, except that a silence (days on which no platform of the flow sent an
 * event, with data on both sides) gives up its whole weeks to days before it.
 * Baselines then learn from days with data however long a silence lasts, and
 * every day keeps its weekday's place (seasonal baselines are weekly). Silent
 * days before the first day with data are no silence: the app had not started
 * sending yet, and the window is the plain one.
 */
export function windowDays(day: string, historyDays: number, dataDays: ReadonlySet<string>, earliest: string): string[] {
  const kept = [day];
  let silence: string[] = [];
  for (let d = addDays(day, -1); d >= earliest && kept.length < historyDays; d = addDays(d, -1)) {
    if (!dataDays.has(d)) {
      silence.push(d);
      continue;
    }
    kept.push(...silence.slice(0, silence.length % 7), d);
    silence = [];
  }
  kept.push(...silence);
  return kept.slice(0, historyDays).reverse();
}

/** The check input for `day`: its window of `historyDays` days (see windowDays). Rows must be sorted by day. */
export function sliceInput(
  history: FlowHistory,
  day: string,
  historyDays: number,
  anomalous: Record<string, string[]>,
  now: string,
  timezone: string,
  hideValues = false,
  learningDays = 0,
): CheckInput {
  const days = windowDays(day, historyDays, history.dataDays, history.from);
  const from = days[0]!;
  const skipped = days.length !== daysBetween(from, day).length;
  const inWindow = new Set(skipped ? days : []);
  // Rows come sorted by day: the window is one slice, found by binary search, less the silent weeks it skipped.
  const within = <T extends { day: string }>(rows: T[]) => {
    const slice = rows.slice(firstAtOrAfter(rows, from), firstAtOrAfter(rows, addDays(day, 1)));
    return skipped ? slice.filter((row) => inWindow.has(row.day)) : slice;
  };
  const events = within(history.events);
  // The window must be able to hold what is to be learnt.
  const needed = Math.min(learningDays, historyDays - 1);
  // Days with data before the judged day in the loaded history: a flow that learnt once does not relearn after a silence.
  const learnt = [...history.dataDays].filter((d) => d < day).length;
  return {
    flow: history.flow,
    day,
    days,
    events,
    params: within(history.params),
    funnel: within(history.funnel),
    steps: within(history.steps),
    status: within(history.status),
    calendar: within(history.calendar),
    anomalous,
    now,
    timezone,
    hideValues,
    ...(learnt < needed ? { learning: { days: learnt, needed } } : {}),
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
