/**
 * Conversion series of a flow's funnel, shared by the `conversion` and
 * `seasonal` checks: which step pairs are judged, and the daily successes and
 * trials of each on one platform, from the platform totals (version '*', no
 * dimension).
 */
import { platformTotals } from './rows.js';
import { dayEnd } from './time.js';
import type { CheckInput, Day, FlowDefinition } from './types.js';

export interface Transition {
  /** Series id part: `zone->rider`, or `intro->done` for end to end. */
  key: string;
  /** Step index of the denominator. */
  from: number;
  /** Step index of the numerator. */
  to: number;
  endToEnd: boolean;
  /** `zone -> rider` or `end-to-end`, for messages. */
  label: string;
}

/**
 * Step to step conversions, plus end to end when the flow has more than two
 * steps (with two, end to end is the one step conversion again).
 */
export function transitions(flow: FlowDefinition): Transition[] {
  const steps = flow.steps;
  const out: Transition[] = [];
  for (let i = 1; i < steps.length; i++) {
    out.push({ key: `${steps[i - 1]!.name}->${steps[i]!.name}`, from: i - 1, to: i, endToEnd: false, label: `${steps[i - 1]!.name} -> ${steps[i]!.name}` });
  }
  if (steps.length > 2) {
    const last = steps.length - 1;
    out.push({ key: `${steps[0]!.name}->${steps[last]!.name}`, from: 0, to: last, endToEnd: true, label: 'end-to-end' });
  }
  return out;
}

export interface RateSeries {
  /** People who converted, per day of `input.days`; NaN when the platform has no funnel rows that day. */
  successes: Float64Array;
  /** People who could convert (the denominator), per day; NaN likewise. */
  trials: Float64Array;
}

export type FunnelTotals = Map<Day, { entered: number[]; reached: number[] }>;

/**
 * Funnel totals per day over one or more platforms: entered and reached per
 * step, summed over the platforms (missing step rows count 0).
 */
const totalsCache = new WeakMap<CheckInput, Map<string, FunnelTotals>>();

export function funnelTotals(input: CheckInput, platforms: readonly string[]): FunnelTotals {
  // Several checks ask for the same platforms' totals of the same input.
  const key = [...platforms].sort().join('|');
  let cached = totalsCache.get(input);
  if (!cached) totalsCache.set(input, (cached = new Map()));
  const hit = cached.get(key);
  if (hit) return hit;
  const steps = input.flow.steps.length;
  const wanted = new Set(platforms);
  const byDay: FunnelTotals = new Map();
  for (const row of platformTotals(input).funnel) {
    if (!wanted.has(row.platform) || row.step >= steps) continue;
    let day = byDay.get(row.day);
    if (!day) byDay.set(row.day, (day = { entered: new Array<number>(steps).fill(0), reached: new Array<number>(steps).fill(0) }));
    day.entered[row.step]! += Number(row.entered);
    day.reached[row.step]! += Number(row.reached);
  }
  cached.set(key, byDay);
  return byDay;
}

/**
 * Daily successes and trials of one transition. Step i-1 -> i: people who
 * reached i coming from i-1 (reached[i] - entered[i]; people entering at step
 * i with `entry: any_step` did not convert from i-1) over reached[i-1]. End to
 * end: reached[last] over everyone who entered (reached[0] with
 * `entry: first_step_only`). A day without funnel rows is unknown (NaN), not 0:
 * nobody entered, or the day was never rolled up.
 */
export function rateSeries(input: CheckInput, funnel: FunnelTotals, transition: Transition): RateSeries {
  const n = input.days.length;
  const successes = new Float64Array(n).fill(Number.NaN);
  const trials = new Float64Array(n).fill(Number.NaN);
  input.days.forEach((day, i) => {
    const counts = funnel.get(day);
    if (!counts) return;
    if (transition.endToEnd) {
      trials[i] = counts.entered.reduce((a, b) => a + b, 0);
      successes[i] = counts.reached[transition.to]!;
    } else {
      trials[i] = counts.reached[transition.from]!;
      successes[i] = counts.reached[transition.to]! - counts.entered[transition.to]!;
    }
  });
  return { successes, trials };
}

/**
 * Whether the judged day's cohort has had its whole conversion window: people
 * who entered just before midnight may still finish until midnight plus the
 * window. Before that the day's funnel undercounts conversion.
 */
export function conversionSettled(input: CheckInput): boolean {
  return Date.parse(input.now) >= dayEnd(input.day, input.timezone).getTime() + input.flow.conversionWindowSeconds * 1000;
}
