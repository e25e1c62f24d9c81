/**
 * Rows and inputs for the `seasonal` and `conversion` check tests: a small
 * Metro Pass flow (intro -> zone -> done), daily series laid out as rollup
 * rows, flow configs parsed by the real schema (defaults, per-platform
 * overrides, mutes), and a summary of an input for failure messages.
 */
import { conversionCheck } from '../../checks/conversion/index.js';
import { seasonalCheck } from '../../checks/seasonal/index.js';
import { addDays, dayEnd } from '../../checks/time.js';
import type {
  CalendarDay,
  CheckInput,
  CheckModule,
  Day,
  DayStatusRow,
  EventDayRow,
  FlowDefinition,
  FunnelDayRow,
  StepDayRow,
} from '../../checks/types.js';
import { toFlowDefinition } from '../../service/config/definitions.js';
import { flowSchema, type FlowConfig } from '../../service/config/schema.js';
import { normal, prng } from '../stats/support.js';

export { normal, prng };

/** A Wednesday. */
export const DAY: Day = '2026-10-14';
export const TIMEZONE = 'America/New_York';
/** Weekday multipliers of traffic, Sunday = 0 (as `weekday()` in checks/time.ts). */
export const WEEKLY = [0.6, 1.0, 1.03, 1.01, 0.98, 0.9, 0.62];

const CHECKS = [seasonalCheck, conversionCheck] as unknown as CheckModule[];

/** Consecutive days ending with `last`, oldest first. */
export function daysEnding(last: Day, n: number): Day[] {
  return Array.from({ length: n }, (_, i) => addDays(last, i - (n - 1)));
}

export interface FlowFile {
  platforms?: string[];
  entry?: 'first_step_only' | 'any_step';
  conversion_window?: string;
  checks?: Record<string, unknown>;
  mutes?: Array<Record<string, unknown>>;
}

/** A flow file as YAML would give it, parsed by the real schema with both checks registered. */
export function flowConfig(file: FlowFile = {}): FlowConfig {
  return flowSchema(CHECKS).parse({
    flow: 'monthly_pass',
    owner: 'growth-analytics',
    steps: [
      { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
      { name: 'zone', event: 'screen_shown', where: { view: 'zone_picker' } },
      { name: 'done', event: 'pass_purchase_result', where: { outcome: 'approved' } },
    ],
    conversion_window: file.conversion_window ?? '30m',
    step_time_cap: '5m',
    entry: file.entry ?? 'first_step_only',
    platforms: file.platforms ?? ['web'],
    checks: file.checks ?? {},
    mutes: file.mutes ?? [],
  });
}

export function flowDefinition(file: FlowFile = {}): FlowDefinition {
  return toFlowDefinition(flowConfig(file));
}

/** The parsed options of one check (defaults, overrides merged per platform), as judgeDay hands them over. */
export function optionsOf<T>(id: 'seasonal' | 'conversion', given: Record<string, unknown> = {}): T {
  return flowConfig({ checks: { [id]: given } }).checks[id] as T;
}

/** Funnel rows of one platform total on one day: reached (and entered, default step 0 only) per step. */
export function funnelDay(day: Day, platform: string, reached: number[], options: { entered?: number[]; secondsMedian?: Array<number | null>; timed?: number[] } = {}): FunnelDayRow[] {
  return reached.map((count, step) => ({
    day,
    flow: 'monthly_pass',
    platform,
    version: '*',
    dimension: '',
    value: '',
    step,
    entered: options.entered?.[step] ?? (step === 0 ? count : 0),
    reached: count,
    secondsMedian: options.secondsMedian?.[step] ?? null,
    secondsP90: null,
    timed: options.timed?.[step] ?? 0,
  }));
}

export function eventDay(day: Day, platform: string, event: string, people: number): EventDayRow {
  return { day, event, platform, version: '*', dimension: '', value: '', events: people * 2, people };
}

export function stepDay(day: Day, platform: string, step: number, people: number): StepDayRow {
  return { day, flow: 'monthly_pass', step, platform, version: '*', events: people, people };
}

/** A day-status row saying the platform sent events that day. */
export function statusDay(day: Day, platform: string): DayStatusRow {
  return { day, platform, events: 1000, newestAt: `${day}T23:59:00.000Z`, hourly: new Array<number>(24).fill(40), rolledUpAt: `${day}T23:59:00.000Z`, previousEvents: null };
}

export interface InputParts {
  flow?: FlowDefinition;
  days?: Day[];
  events?: EventDayRow[];
  funnel?: FunnelDayRow[];
  steps?: StepDayRow[];
  status?: DayStatusRow[];
  calendar?: CalendarDay[];
  anomalous?: Record<string, Day[]>;
  now?: string;
}

/**
 * A check input ending on the last of `days` (default: 120 days ending DAY),
 * judged at the daily run's time (2 h after the day ends) unless `now` is
 * given; every platform reports events every day unless `status` is given.
 */
export function makeInput(parts: InputParts = {}): CheckInput {
  const flow = parts.flow ?? flowDefinition();
  const days = parts.days ?? daysEnding(DAY, 120);
  const day = days[days.length - 1]!;
  return {
    flow,
    day,
    days,
    events: parts.events ?? [],
    params: [],
    funnel: parts.funnel ?? [],
    steps: parts.steps ?? [],
    status: parts.status ?? days.flatMap((d) => flow.platforms.map((platform) => statusDay(d, platform))),
    calendar: parts.calendar ?? [],
    anomalous: parts.anomalous ?? {},
    now: parts.now ?? new Date(dayEnd(day, TIMEZONE).getTime() + 2 * 3600_000).toISOString(),
    timezone: TIMEZONE,
  };
}

/** A weekly-patterned count series: level x WEEKLY[weekday] x (1 + noise x N(0, 1)), rounded. */
export function weeklyCounts(days: readonly Day[], level: number, noise: number, seed = 7): number[] {
  const rand = prng(seed);
  return days.map((day) => Math.round(level * WEEKLY[new Date(`${day}T12:00:00Z`).getUTCDay()]! * (1 + noise * normal(rand))));
}

/** The last `n` values of each series in the input, for failure messages (a failing test prints its inputs). */
export function describeInput(input: CheckInput, n = 10): string {
  const tail = <T extends { day: Day }>(rows: T[], show: (row: T) => string) =>
    rows
      .filter((row) => row.day >= input.days[Math.max(0, input.days.length - n)]!)
      .map(show)
      .join(' ');
  return [
    `day ${input.day}, now ${input.now}, platforms ${input.flow.platforms.join(',')}`,
    `events: ${tail(input.events, (r) => `${r.day.slice(5)} ${r.platform} ${r.event}=${r.people}`)}`,
    `steps: ${tail(input.steps, (r) => `${r.day.slice(5)} ${r.platform} s${r.step}=${r.people}`)}`,
    `funnel: ${tail(input.funnel, (r) => `${r.day.slice(5)} ${r.platform} s${r.step}=${r.reached}${r.secondsMedian !== null ? `/${r.secondsMedian}s` : ''}`)}`,
    `calendar: ${JSON.stringify(input.calendar)}, anomalous: ${JSON.stringify(input.anomalous)}`,
  ].join('\n');
}
