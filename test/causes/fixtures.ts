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

export function buildInput(options: { breakage?: Breakage; calendar?: CheckInput['calendar']; history?: number } = {}): CheckInput {
  const history = options.history ?? 35;
  const days = Array.from({ length: history }, (_, i) => addDays(DAY, i - history + 1));
  const funnel: FunnelDayRow[] = [];
  const steps: StepDayRow[] = [];
  const events: EventDayRow[] = [];
  for (const day of days) {
    for (const platform of FLOW.platforms) {
      const totals = { intro: 0, rider: 0, done: 0 };
      const byCountry = new Map<string, { intro: number; rider: number; done: number }>();
      for (const { version, share } of VERSIONS[platform]!) {
        const versionTotals = { intro: 0, rider: 0, done: 0 };
        for (const country of COUNTRIES) {
          const broken = day === DAY && options.breakage ? options.breakage({ platform, version, country: country.value, day }) : {};
          const intro = Math.round(2000 * share * country.share * (broken.volume ?? 1));
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
        pushFunnel(funnel, day, platform, version, '', '', versionTotals);
        pushSteps(steps, day, platform, version, versionTotals);
        pushEvents(events, day, platform, version, '', '', versionTotals);
        totals.intro += versionTotals.intro;
        totals.rider += versionTotals.rider;
        totals.done += versionTotals.done;
      }
      pushFunnel(funnel, day, platform, '*', '', '', totals);
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

function pushFunnel(rows: FunnelDayRow[], day: string, platform: string, version: string, dimension: string, value: string, t: { intro: number; rider: number; done: number }) {
  [t.intro, t.rider, t.done].forEach((reached, step) =>
    rows.push({ day, flow: FLOW.id, platform, version, dimension, value, step, entered: step === 0 ? reached : 0, reached, secondsMedian: null, secondsP90: null, timed: 0 }),
  );
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
