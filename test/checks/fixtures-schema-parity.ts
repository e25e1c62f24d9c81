/**
 * Rollup rows for the `schema` and `parity` tests, built from a few numbers
 * instead of by hand: a Metro Pass flow, consecutive days, parameter
 * profiles per version and funnels per platform. Noise comes from a seeded
 * generator, so every run sees the same rows.
 */
import { flowSchema } from '../../service/config/schema.js';
import type { CheckModule, CheckInput, Day, EventDayRow, FlowDefinition, FunnelDayRow, ParamDayRow, StepDayRow } from '../../checks/types.js';
import { addDays } from '../../checks/time.js';

export const TODAY = '2026-11-10';
export const TIMEZONE = 'America/New_York';

/** `count` consecutive days ending with `last`, oldest first. */
export function daysUntil(last: Day, count: number): Day[] {
  return Array.from({ length: count }, (_, i) => addDays(last, i - count + 1));
}

/** The monthly pass flow of the demo, trimmed to four steps, with a parameter contract on zone_selected. */
export function passFlow(overrides: Partial<FlowDefinition> = {}): FlowDefinition {
  return {
    id: 'monthly_pass',
    owner: 'growth-analytics',
    steps: [
      { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
      { name: 'zone', event: 'screen_shown', where: { view: 'zone_picker' } },
      { name: 'rider', event: 'screen_shown', where: { view: 'rider_details' } },
      { name: 'done', event: 'pass_purchase_result', where: { outcome: 'approved' } },
    ],
    conversionWindowSeconds: 1800,
    stepTimeCapSeconds: 300,
    entry: 'first_step_only',
    platforms: ['web', 'android', 'ios'],
    events: ['screen_shown', 'pass_purchase_result', 'zone_selected'],
    contracts: {
      zone_selected: {
        fare_zone: { type: 'string', enum: ['A', 'AB', 'ABC'], required: true, nullable: false },
        rider_type: { type: 'string', enum: ['adult', 'student', 'senior'], required: false, nullable: false },
      },
      pass_purchase_result: {
        amount_cents: { type: 'integer', min: 0, max: 50000, required: false, nullable: false },
      },
    },
    ...overrides,
  };
}

export function checkInput(flow: FlowDefinition, days: Day[], rows: Partial<Pick<CheckInput, 'events' | 'params' | 'funnel' | 'steps' | 'calendar' | 'anomalous'>>): CheckInput {
  const day = days[days.length - 1]!;
  return {
    flow,
    day,
    days,
    events: rows.events ?? [],
    params: rows.params ?? [],
    funnel: rows.funnel ?? [],
    steps: rows.steps ?? [],
    // Every platform sent events on the judged day: a day without any is held back before the checks (judgeDay).
    status: flow.platforms.map((platform) => ({ day, platform, events: 1000, newestAt: null, hourly: [], rolledUpAt: `${addDays(day, 1)}T06:30:00.000Z`, previousEvents: null })),
    calendar: rows.calendar ?? [],
    anomalous: rows.anomalous ?? {},
    now: `${addDays(day, 1)}T07:00:00.000Z`,
    timezone: TIMEZONE,
  };
}

/** Seeded uniform numbers in [0, 1), so fixtures vary like data and never change between runs. */
export { prng as seeded } from '../stats/support.js';

/** How one key of one event looks on one version-day. */
export interface KeySpec {
  /** JSON type of the non-null values; default string. */
  type?: string;
  /** Share of the event's events carrying the key (null included); default 1. */
  share?: number;
  /** Share of the carried events that are JSON null; default 0. */
  nulls?: number;
  /** Values and their shares of the non-null events (they add up to 1); none: not profiled as values. */
  values?: Record<string, number>;
  /** Distinct values when the profile lists only some (a partial profile), or null (too many to profile). */
  distinct?: number | null;
  minNumber?: number;
  maxNumber?: number;
  /** Share of the numbers with a fraction. */
  fractional?: number;
}

/** The rows of one event on one platform, version and day: its count and its parameter profile. */
export function profileRows(day: Day, event: string, platform: string, version: string, total: number, keys: Record<string, KeySpec>): { events: EventDayRow[]; params: ParamDayRow[] } {
  const params: ParamDayRow[] = [];
  for (const [key, spec] of Object.entries(keys)) {
    const carried = Math.round(total * (spec.share ?? 1));
    const nulls = Math.round(carried * (spec.nulls ?? 0));
    const typed = carried - nulls;
    const base = { day, event, platform, version, key, eventTotal: total, minNumber: null, maxNumber: null, fractional: 0 };
    if (typed > 0) {
      const values = Object.entries(spec.values ?? {});
      const topValues = values.map(([value, share]) => ({ value, events: Math.round(typed * share) })).filter((top) => top.events > 0);
      const type = spec.type ?? 'string';
      params.push({
        ...base,
        jsonType: type,
        events: typed,
        distinctValues: spec.distinct === undefined ? topValues.length : spec.distinct,
        topValues,
        ...(type === 'number' ? { minNumber: spec.minNumber ?? 0, maxNumber: spec.maxNumber ?? 0, fractional: Math.round(typed * (spec.fractional ?? 0)) } : {}),
      });
    }
    if (nulls > 0) params.push({ ...base, jsonType: 'null', events: nulls, distinctValues: 0, topValues: [] });
  }
  return { events: [{ day, event, platform, version, dimension: '', value: '', events: total, people: total }], params };
}

/**
 * An event's rows over days: per day, each version's event count and key
 * specs (return undefined for a version that did not send the event that day).
 */
export function profileHistory(
  days: readonly Day[],
  event: string,
  platform: string,
  versions: Record<string, (day: Day, i: number) => { total: number; keys: Record<string, KeySpec> } | undefined>,
): { events: EventDayRow[]; params: ParamDayRow[] } {
  const out = { events: [] as EventDayRow[], params: [] as ParamDayRow[] };
  days.forEach((day, i) => {
    for (const [version, spec] of Object.entries(versions)) {
      const cell = spec(day, i);
      if (!cell || cell.total <= 0) continue;
      const rows = profileRows(day, event, platform, version, cell.total, cell.keys);
      out.events.push(...rows.events);
      out.params.push(...rows.params);
    }
  });
  return out;
}

export function merge<T extends Record<string, unknown[]>>(...parts: T[]): T {
  const out = {} as Record<string, unknown[]>;
  for (const part of parts) for (const [name, rows] of Object.entries(part)) (out[name] ??= []).push(...rows);
  return out as T;
}

/** One platform's funnel on one day: people entering, then the continuation rate of each later step. */
export interface FunnelSpec {
  entrants: number;
  /** Continuation from step i-1 to step i, for i = 1..steps-1. */
  rates: number[];
  /** People per step in any order (step counts), when they differ from the ordered funnel. */
  stepPeople?: number[];
}

/**
 * Funnel rows (all versions, no dimension) and the matching step and event
 * counts per platform and day. `spec` returns undefined for a platform that
 * sent nothing that day.
 */
export function funnelHistory(flow: FlowDefinition, days: readonly Day[], spec: (platform: string, day: Day, i: number) => FunnelSpec | undefined) {
  const funnel: FunnelDayRow[] = [];
  const steps: StepDayRow[] = [];
  const events: EventDayRow[] = [];
  days.forEach((day, i) => {
    for (const platform of flow.platforms) {
      const s = spec(platform, day, i);
      if (!s) continue;
      const reached = [s.entrants];
      for (const rate of s.rates) reached.push(Math.round(reached[reached.length - 1]! * rate));
      const perEvent = new Map<string, number>();
      reached.forEach((people, step) => {
        funnel.push({ day, flow: flow.id, platform, version: '*', dimension: '', value: '', step, entered: step === 0 ? people : 0, reached: people, secondsMedian: null, secondsP90: null, timed: 0 });
        const any = s.stepPeople?.[step] ?? people;
        steps.push({ day, flow: flow.id, step, platform, version: '*', events: any, people: any });
        const event = flow.steps[step]!.event;
        perEvent.set(event, (perEvent.get(event) ?? 0) + any);
      });
      for (const [event, people] of perEvent) if (people > 0) events.push({ day, event, platform, version: '*', dimension: '', value: '', events: people, people });
    }
  });
  return { funnel, steps, events };
}

/** A flow's config through the real schema (mutes, per-platform overrides), for judgeDay. */
export function flowConfig(check: CheckModule, checkOptions: Record<string, unknown> = {}, mutes: unknown[] = []) {
  return flowSchema([check]).parse({
    flow: 'monthly_pass',
    owner: 'growth-analytics',
    steps: passFlow().steps,
    conversion_window: '30m',
    step_time_cap: '5m',
    platforms: ['web', 'android', 'ios'],
    checks: { [check.id]: checkOptions },
    mutes,
  });
}

/** The options a check runs with, as the config loader would build them. */
export function optionsOf(check: CheckModule, checkOptions: Record<string, unknown> = {}) {
  return flowConfig(check, checkOptions).checks[check.id] as never;
}

/** A compact account of an input for failure messages: the series that matter, day by day. */
export function explain(input: CheckInput, extra: unknown = {}): string {
  const last = input.days.slice(-5);
  const params = input.params.filter((row) => last.includes(row.day)).map((row) => `${row.day} ${row.platform} ${row.version} ${row.event}.${row.key}:${row.jsonType} ${row.events}/${row.eventTotal} ${JSON.stringify(row.topValues)}`);
  const funnel = input.funnel.filter((row) => last.includes(row.day)).map((row) => `${row.day} ${row.platform} step ${row.step} reached ${row.reached}`);
  return JSON.stringify({ day: input.day, calendar: input.calendar, anomalous: input.anomalous, extra, lastDays: { params, funnel } }, null, 1);
}
