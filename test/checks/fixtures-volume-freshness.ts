/**
 * Small builders of check inputs for the volume and freshness tests: plain
 * rows from a few numbers, so each test states only what it is about.
 */
import { addDays, dayEnd, dayStart, weekday } from '../../checks/time.js';
import type { CalendarDay, CheckInput, CheckModule, DayStatusRow, EventDayRow, FlowDefinition, StepDayRow } from '../../checks/types.js';
import { ALL_VERSIONS } from '../../checks/types.js';
import { flowSchema, type FlowConfig } from '../../service/config/schema.js';

/** A cut-down monthly_pass: two narrowed screen_shown steps and a purchase step that is its whole event. */
export const flow: FlowDefinition = {
  id: 'monthly_pass',
  owner: 'growth-analytics',
  steps: [
    { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
    { name: 'rider', event: 'screen_shown', where: { view: 'rider_details' } },
    { name: 'done', event: 'pass_purchase_result', where: {} },
  ],
  conversionWindowSeconds: 1800,
  stepTimeCapSeconds: 300,
  entry: 'first_step_only',
  platforms: ['web', 'android'],
  events: ['screen_shown', 'pass_purchase_result'],
  contracts: {},
};

/** Monday-first shape of a commuter app: weekends lower. */
const WEEKDAY_SHAPE = [0.6, 1.0, 1.03, 1.01, 0.98, 0.9, 0.62]; // indexed by weekday(), 0 = Sunday

/** `n` consecutive days ending with `end`. */
export function daysEnding(end: string, n: number): string[] {
  return Array.from({ length: n }, (_, i) => addDays(end, i - n + 1));
}

/** A deterministic wobble of about +-3%, different every day. */
export function wobble(i: number): number {
  return 1 + (((i * 7919) % 13) - 6) / 200;
}

/** The usual people of a series with this weekday size: base x weekday shape x wobble. */
export function usual(base: number): (day: string, i: number) => number {
  return (day, i) => Math.round(base * WEEKDAY_SHAPE[weekday(day)]! * wobble(i));
}

export interface SeriesSpec {
  platform: string;
  /** An event name, or a step index of `flow`. */
  event?: string;
  step?: number;
  /** People on a day; null for no row. */
  people: (day: string, i: number) => number | null;
  /** Events per person on a day (default 1.5). */
  perPerson?: (day: string, i: number) => number;
}

export interface InputSpec {
  end: string;
  days?: number;
  series?: SeriesSpec[];
  status?: DayStatusRow[];
  calendar?: CalendarDay[];
  anomalous?: Record<string, string[]>;
  now?: string;
  timezone?: string;
}

/**
 * A check input over `days` days (default 84) ending with `end`. Every platform
 * of `flow` also gets a full-day status row every day unless `status` is given,
 * so a missing series row reads as "the platform sent other things".
 */
export function makeInput(spec: InputSpec): CheckInput {
  const timezone = spec.timezone ?? 'UTC';
  const days = daysEnding(spec.end, spec.days ?? 84);
  const events: EventDayRow[] = [];
  const steps: StepDayRow[] = [];
  for (const s of spec.series ?? []) {
    days.forEach((day, i) => {
      const people = s.people(day, i);
      if (people === null) return;
      const count = Math.round(people * (s.perPerson?.(day, i) ?? 1.5));
      if (s.step !== undefined) steps.push({ day, flow: flow.id, step: s.step, platform: s.platform, version: ALL_VERSIONS, events: count, people });
      else events.push({ day, event: s.event!, platform: s.platform, version: ALL_VERSIONS, dimension: '', value: '', events: count, people });
    });
  }
  const status = spec.status ?? flow.platforms.flatMap((platform) => days.map((day) => statusRow(day, platform, { timezone })));
  return {
    flow,
    day: spec.end,
    days,
    events,
    params: [],
    funnel: [],
    steps,
    status,
    calendar: spec.calendar ?? [],
    anomalous: spec.anomalous ?? {},
    now: spec.now ?? new Date(dayEnd(spec.end, timezone).getTime() + 2 * 3_600_000).toISOString(),
    timezone,
  };
}

/** Share of a day's events in each local clock hour: quiet nights, morning and evening peaks (sums to 1). */
const HOUR_SHAPE = (() => {
  const raw = [1, 0.5, 0.3, 0.3, 0.6, 2, 5, 9, 10, 7, 4, 3, 3, 3, 4, 5, 7, 8, 8, 7, 5, 4, 3, 2];
  const total = raw.reduce((a, b) => a + b, 0);
  return raw.map((v) => v / total);
})();

export interface StatusSpec {
  /** Events of a complete day (default 10,000). */
  events?: number;
  timezone?: string;
  /** Local time `HH:MM` after which nothing arrived. */
  stopAt?: string;
  /** Multiplies the events of the last `thinHours` hours (a slow trickle). */
  thinFactor?: number;
  thinHours?: number;
  previousEvents?: number | null;
  rolledUpAt?: string;
}

/**
 * The day-status row of one platform: events spread over the local hours of
 * the day by HOUR_SHAPE (23, 24 or 25 entries on DST days, each taking the
 * share of the clock hour it covers), cut at `stopAt` or thinned at the end.
 */
export function statusRow(day: string, platform: string, spec: StatusSpec = {}): DayStatusRow {
  const timezone = spec.timezone ?? 'UTC';
  const total = spec.events ?? 10_000;
  const start = dayStart(day, timezone).getTime();
  const end = dayEnd(day, timezone).getTime();
  const n = Math.round((end - start) / 3_600_000);
  const hourOf = new Intl.DateTimeFormat('en-US', { timeZone: timezone, hourCycle: 'h23', hour: '2-digit' });
  const clocks = Array.from({ length: n }, (_, i) => Number(hourOf.format(new Date(start + i * 3_600_000 + 1_800_000))) % 24);
  let stop = end;
  if (spec.stopAt !== undefined) {
    const [h, m] = spec.stopAt.split(':').map(Number) as [number, number];
    stop = start + (clocks.indexOf(h) + m / 60) * 3_600_000;
  }
  const hourly: number[] = [];
  let newest = start;
  for (let i = 0; i < n; i++) {
    const from = start + i * 3_600_000;
    const covered = Math.max(0, Math.min(1, (stop - from) / 3_600_000));
    let events = Math.round(total * HOUR_SHAPE[clocks[i]!]! * covered);
    if (spec.thinFactor !== undefined && i >= n - (spec.thinHours ?? 3)) events = Math.round(events * spec.thinFactor);
    hourly.push(events);
    if (events > 0) newest = Math.min(stop, from + 3_600_000) - 1_000;
  }
  const events = hourly.reduce((a, b) => a + b, 0);
  return {
    day,
    platform,
    events,
    newestAt: events > 0 ? new Date(newest).toISOString() : null,
    hourly,
    rolledUpAt: spec.rolledUpAt ?? new Date(end + 2 * 3_600_000).toISOString(),
    previousEvents: spec.previousEvents ?? null,
  };
}

/** Status rows of every platform of `flow` on every day, with `override` for some (day, platform). */
export function statusRows(days: string[], override: (day: string, platform: string) => StatusSpec | undefined = () => undefined, timezone = 'UTC'): DayStatusRow[] {
  return flow.platforms.flatMap((platform) => days.map((day) => statusRow(day, platform, { timezone, ...override(day, platform) })));
}

/** Options with no per-platform overrides, as the config loader hands them over. */
export function withPlatforms<O extends object>(options: O, perPlatform: Record<string, Partial<O>> = {}) {
  return {
    ...options,
    per_platform: Object.fromEntries(Object.entries(perPlatform).map(([platform, override]) => [platform, { ...options, ...override }])) as Record<string, O>,
  };
}

/** A compact dump of an input's rows for failure messages. */
export function describeInput(input: CheckInput, last = 15): string {
  const recent = new Set(input.days.slice(-last));
  const rows = [...input.events, ...input.steps].filter((row) => recent.has(row.day));
  return JSON.stringify({ day: input.day, calendar: input.calendar, anomalous: input.anomalous, lastDays: rows }, null, 1);
}

/** The flow file of `flow` parsed with `checks` registered, with optional check options and mutes. */
export function flowConfig(checks: readonly CheckModule[], extra: { checks?: Record<string, unknown>; mutes?: unknown[] } = {}): FlowConfig {
  return flowSchema(checks).parse({
    flow: flow.id,
    owner: flow.owner,
    steps: flow.steps,
    conversion_window: '30m',
    step_time_cap: '5m',
    platforms: flow.platforms,
    checks: extra.checks ?? {},
    mutes: extra.mutes ?? [],
  });
}
