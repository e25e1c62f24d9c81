/**
 * Synthetic rollups for the cause analysis tests: a three-step flow on three
 * platforms, two app versions on the apps, and a country dimension, with rates
 * that a test can break for one slice on the judged day.
 */
import { addDays } from '../../checks/time.js';
import type { CheckInput, EventDayRow, FlowDefinition, Finding, FunnelDayRow, StepDayRow } from '../../checks/types.js';

export const DAY = '2026-10-20';
export const FLOW: FlowDefinition = {
  id: 'monthly_pass',
  owner: 'growth-analytics',
  steps: [
    { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
    { name: 'rider', event: 'screen_shown', where: { view: 'rider_details' } },
    { name: 'done', event: 'pass_purchase_result', where: { outcome: 'approved' } },
  ],
  conversionWindowSeconds: 1800,
  stepTimeCapSeconds: 300,
  entry: 'first_step_only',
  platforms: ['web', 'android', 'ios'],
  events: ['screen_shown', 'pass_purchase_result'],
  contracts: {},
};

const VERSIONS: Record<string, Array<{ version: string; share: number }>> = {
  web: [{ version: '', share: 1 }],
  android: [
    { version: '7.3.0', share: 0.6 },
    { version: '7.4.0', share: 0.4 },
  ],
  ios: [
    { version: '5.1.0', share: 0.7 },
    { version: '5.2.0', share: 0.3 },
  ],
};
const COUNTRIES = [
  { value: 'US', share: 0.8 },
  { value: 'CA', share: 0.1 },
  { value: 'MX', share: 0.1 },
];

/** Per-slice rates on the judged day: return multipliers for [rider | intro, done | rider]. */
export type Breakage = (slice: { platform: string; version: string; country: string; day: string }) => { rider?: number; done?: number; volume?: number };

/** People per day of a platform as a multiple of the usual (a weekly pattern, day-to-day noise); 1 when not given. */
export type Level = (slice: { platform: string; country: string; day: string }) => number;
/** Median and 90th percentile of the intro -> rider time of a slice on a day, in seconds; no times when not given. */
export type Times = (slice: { platform: string; version: string; day: string }) => { median: number; p90: number };

export function buildInput(
  options: { breakage?: Breakage; calendar?: CheckInput['calendar']; history?: number; level?: Level; times?: Times; versions?: Partial<typeof VERSIONS> } = {},
): CheckInput {
  const versions = { ...VERSIONS, ...options.versions };
  const history = options.history ?? 35;
  const days = Array.from({ length: history }, (_, i) => addDays(DAY, i - history + 1));
  const funnel: FunnelDayRow[] = [];
  const steps: StepDayRow[] = [];
  const events: EventDayRow[] = [];
  for (const day of days) {
    for (const platform of FLOW.platforms) {
      const totals = { intro: 0, rider: 0, done: 0 };
      const timed: Array<{ median: number; p90: number; people: number }> = [];
      const byCountry = new Map<string, { intro: number; rider: number; done: number }>();
      for (const { version, share } of versions[platform]!) {
        const versionTotals = { intro: 0, rider: 0, done: 0 };
        for (const country of COUNTRIES) {
          const broken = day === DAY && options.breakage ? options.breakage({ platform, version, country: country.value, day }) : {};
          const level = options.level?.({ platform, country: country.value, day }) ?? 1;
          const intro = Math.round(2000 * share * country.share * level * (broken.volume ?? 1));
          const rider = Math.round(intro * 0.8 * (broken.rider ?? 1));
          const done = Math.round(rider * 0.7 * (broken.done ?? 1));
          versionTotals.intro += intro;
          versionTotals.rider += rider;
          versionTotals.done += done;
          const c = byCountry.get(country.value) ?? { intro: 0, rider: 0, done: 0 };
          c.intro += intro;
          c.rider += rider;
          c.done += done;
          byCountry.set(country.value, c);
        }
        const time = options.times?.({ platform, version, day });
        pushFunnel(funnel, day, platform, version, '', '', versionTotals, time);
        if (time) timed.push({ ...time, people: versionTotals.rider });
        pushSteps(steps, day, platform, version, versionTotals);
        pushEvents(events, day, platform, version, '', '', versionTotals);
        totals.intro += versionTotals.intro;
        totals.rider += versionTotals.rider;
        totals.done += versionTotals.done;
      }
      // The platform total's times: the timed-weighted geometric mean of the versions' (close enough to a pooled median here).
      const geometric = (pick: (t: { median: number; p90: number }) => number) =>
        Math.exp(timed.reduce((sum, t) => sum + t.people * Math.log(pick(t)), 0) / timed.reduce((sum, t) => sum + t.people, 0));
      pushFunnel(funnel, day, platform, '*', '', '', totals, timed.length > 0 ? { median: geometric((t) => t.median), p90: geometric((t) => t.p90) } : undefined);
      pushSteps(steps, day, platform, '*', totals);
      pushEvents(events, day, platform, '*', '', '', totals);
      for (const [country, c] of byCountry) {
        pushFunnel(funnel, day, platform, '*', 'country', country, c);
        pushEvents(events, day, platform, '*', 'country', country, c);
      }
    }
  }
  return {
    flow: FLOW,
    day: DAY,
    days,
    events,
    params: [],
    funnel,
    steps,
    status: [],
    calendar: options.calendar ?? [],
    anomalous: {},
    now: '2026-10-21T06:00:00Z',
    timezone: 'America/New_York',
  };
}

function pushFunnel(
  rows: FunnelDayRow[],
  day: string,
  platform: string,
  version: string,
  dimension: string,
  value: string,
  t: { intro: number; rider: number; done: number },
  time?: { median: number; p90: number },
) {
  [t.intro, t.rider, t.done].forEach((reached, step) => {
    const timedStep = step === 1 && time !== undefined;
    rows.push({
      day,
      flow: FLOW.id,
      platform,
      version,
      dimension,
      value,
      step,
      entered: step === 0 ? reached : 0,
      reached,
      secondsMedian: timedStep ? time.median : null,
      secondsP90: timedStep ? time.p90 : null,
      timed: timedStep ? reached : 0,
    });
  });
}

function pushSteps(rows: StepDayRow[], day: string, platform: string, version: string, t: { intro: number; rider: number; done: number }) {
  [t.intro, t.rider, t.done].forEach((people, step) => rows.push({ day, flow: FLOW.id, step, platform, version, events: people, people }));
}

function pushEvents(rows: EventDayRow[], day: string, platform: string, version: string, dimension: string, value: string, t: { intro: number; rider: number; done: number }) {
  rows.push({ day, event: 'screen_shown', platform, version, dimension, value, events: t.intro + t.rider, people: t.intro });
  rows.push({ day, event: 'pass_purchase_result', platform, version, dimension, value, events: t.done, people: t.done });
}

/** A finding as a check would report it (only the fields the cause analysis reads matter). */
export function finding(overrides: Partial<Finding> & Pick<Finding, 'check' | 'metric' | 'subject' | 'platform'>): Finding {
  return {
    kind: 'drop',
    flow: FLOW.id,
    version: null,
    day: DAY,
    observed: 0,
    expected: { low: 0, high: 0, center: 0 },
    score: -5,
    direction: 'down',
    severity: 'page',
    message: `${overrides.subject.name} dropped`,
    seriesKey: `${overrides.check}:${overrides.metric}:${overrides.subject.name}:${overrides.platform ?? '*'}`,
    excerpt: [],
    ...overrides,
  };
}
