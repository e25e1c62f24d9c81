import { addDays, daysBetween } from '../config/definitions.js';

/**
 * Which business days a daily pass must run: pure, clock-injected decisions,
 * so tests drive any instant (DST nights included) without waiting.
 */

/** The calendar day of `instant` in `timezone`, as YYYY-MM-DD. */
export function localDay(instant: Date, timezone: string): string {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone: timezone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(instant);
  const part = (type: Intl.DateTimeFormatPartTypes) => parts.find((p) => p.type === type)!.value;
  return `${part('year')}-${part('month')}-${part('day')}`;
}

/**
 * The newest business day that may be judged at `now`: the one whose end (the
 * next local midnight) lies at least `settleSeconds` in the past. The settle
 * time is elapsed time, so on DST nights it is counted in real hours, as the
 * rollup counts the day itself.
 */
export function latestSettledDay(now: Date, timezone: string, settleSeconds: number): string {
  return addDays(localDay(new Date(now.getTime() - settleSeconds * 1000), timezone), -1);
}

/** The verdict stored for one (flow, day). */
export interface StoredVerdict {
  flow: string;
  day: string;
  verdict: 'judged' | 'not_ready';
  /** Older than the recheck interval (database time): a `not_ready` day may be tried again. */
  stale: boolean;
}

export interface PassPlanInput {
  now: Date;
  timezone: string;
  settleSeconds: number;
  /** Earlier days a pass looks back at besides the newest settled one (`schedule.catch_up_days`). */
  catchUpDays: number;
  flows: readonly string[];
  /** Verdicts stored for the days of the window (others are ignored). */
  verdicts: readonly StoredVerdict[];
  /** The newest day with a `judged` verdict for any flow, before or inside the window. */
  lastJudged: string | null;
}

export interface PassPlan {
  /** The newest settled day: the pass is for it. */
  latest: string;
  windowStart: string;
  /** Days to run, oldest first, so baselines and incidents build up in order. */
  due: string[];
  /** Never-judged days older than the window: too many to catch up unattended. */
  leftBehind?: { from: string; to: string };
}

/** The days a pass looks at: the newest settled day and `catchUpDays` days before it. */
export function passWindow(input: Pick<PassPlanInput, 'now' | 'timezone' | 'settleSeconds' | 'catchUpDays'>): { latest: string; windowStart: string } {
  const latest = latestSettledDay(input.now, input.timezone, input.settleSeconds);
  return { latest, windowStart: addDays(latest, -input.catchUpDays) };
}

/**
 * A day of the window is due when a flow has no verdict for it, or only a
 * `not_ready` one old enough to try again (late data may have arrived). A
 * recent `not_ready` verdict is left alone, so two replicas finishing the same
 * pass one after the other do not judge the day twice.
 */
export function planPass(input: PassPlanInput): PassPlan {
  const { latest, windowStart } = passWindow(input);
  const settled = new Map(input.verdicts.map((v) => [`${v.flow}|${v.day}`, v.verdict === 'judged' || !v.stale]));
  const due = daysBetween(windowStart, latest).filter((day) => input.flows.some((flow) => settled.get(`${flow}|${day}`) !== true));
  const plan: PassPlan = { latest, windowStart, due };
  const beforeWindow = addDays(windowStart, -1);
  if (input.lastJudged !== null && input.lastJudged < beforeWindow) {
    plan.leftBehind = { from: addDays(input.lastJudged, 1), to: beforeWindow };
  }
  return plan;
}
