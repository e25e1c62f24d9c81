import { describe, expect, it } from 'vitest';
import { analyseCauses } from '../../checks/causes/index.js';
import { options, segmentsCheck } from '../../checks/segments/index.js';
import { addDays, dayEnd, weekday } from '../../checks/time.js';
import { ALL_VERSIONS, type CalendarDay, type CheckInput, type EventDayRow, type Finding, type FlowDefinition, type FunnelDayRow } from '../../checks/types.js';
import { volumeCheck, options as volumeOptions } from '../../checks/volume/index.js';
import { normal, prng } from '../stats/support.js';

// Synthetic rollups of a three-step flow on two platforms with one dimension, `region`, of four values: every
// number is arithmetic on the fixture below (a weekday shape, a shared day-to-day swing, Poisson-sized noise).
// The thresholds are the check's defaults: max_drop 30%, min_people 50, min_score 4, false_discovery_rate 1%
// (common practice, as `volume`), warn_loss 2%, page_loss 30% (our choice).
const DAY = '2026-11-17'; // a Tuesday
const DAYS = 84;
const defaults = options.parse({});

const flow: FlowDefinition = {
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

const WEEKDAY_SHAPE = [0.6, 1.0, 1.03, 1.01, 0.98, 0.9, 0.62]; // 0 = Sunday
/** Conversion from one step to the next, for every value. */
const CONTINUE = [0.7, 0.75];

interface Spec {
  /** People entering a plain weekday on each platform, all values together. */
  base?: number;
  /** Each value's share of the people. */
  shares?: Record<string, number>;
  /** Factor on a value's people entering on a day (a drop), by value. */
  entering?: (value: string, day: string) => number;
  /** Factor on a value's last-step conversion on a day. */
  converting?: (value: string, day: string) => number;
  /** Factor on everyone on a day (a holiday). */
  everyone?: (day: string) => number;
  calendar?: CalendarDay[];
  end?: string;
  seed?: number;
}

const REGIONS = { north: 0.4, south: 0.26, east: 0.24, west: 0.1 };

/**
 * The flow's rollups: per platform the totals (no dimension) and per region, funnel and event rows, all versions.
 * Each day has a swing shared by every value (+-8%) and each count Poisson-sized noise, as a real flow does.
 */
function makeInput(spec: Spec = {}): CheckInput {
  const end = spec.end ?? DAY;
  const days = Array.from({ length: DAYS }, (_, i) => addDays(end, i - DAYS + 1));
  const rand = prng(spec.seed ?? 14);
  const shares = spec.shares ?? REGIONS;
  const funnel: FunnelDayRow[] = [];
  const events: EventDayRow[] = [];
  const noisy = (mean: number) => Math.max(0, Math.round(mean + Math.sqrt(mean) * normal(rand)));
  const row = (day: string, platform: string, dimension: string, value: string, step: number, reached: number): FunnelDayRow => ({
    day,
    flow: flow.id,
    platform,
    version: ALL_VERSIONS,
    dimension,
    value,
    step,
    entered: step === 0 ? reached : 0,
    reached,
    secondsMedian: null,
    secondsP90: null,
    timed: 0,
  });
  days.forEach((day) => {
    const swing = 1 + 0.08 * normal(rand);
    for (const platform of flow.platforms) {
      const totals = [0, 0, 0];
      for (const [value, share] of Object.entries(shares)) {
        const mean = (spec.base ?? 2000) * share * WEEKDAY_SHAPE[weekday(day)]! * swing * (spec.everyone?.(day) ?? 1) * (spec.entering?.(value, day) ?? 1);
        const entering = noisy(mean);
        const rider = Math.round(entering * CONTINUE[0]!);
        const done = Math.round(rider * CONTINUE[1]! * (spec.converting?.(value, day) ?? 1));
        [entering, rider, done].forEach((reached, step) => {
          funnel.push(row(day, platform, 'region', value, step, reached));
          totals[step]! += reached;
        });
        events.push({ day, event: 'screen_shown', platform, version: ALL_VERSIONS, dimension: 'region', value, events: 2 * entering, people: entering });
        events.push({ day, event: 'pass_purchase_result', platform, version: ALL_VERSIONS, dimension: 'region', value, events: done, people: done });
      }
      totals.forEach((reached, step) => funnel.push(row(day, platform, '', '', step, reached)));
      events.push({ day, event: 'screen_shown', platform, version: ALL_VERSIONS, dimension: '', value: '', events: 2 * totals[0]!, people: totals[0]! });
      events.push({ day, event: 'pass_purchase_result', platform, version: ALL_VERSIONS, dimension: '', value: '', events: totals[2]!, people: totals[2]! });
    }
  });
  return {
    flow,
    day: end,
    days,
    events,
    params: [],
    funnel,
    steps: [],
    status: [],
    calendar: spec.calendar ?? [],
    anomalous: {},
    now: new Date(dayEnd(end, 'UTC').getTime() + 7_200_000).toISOString(),
    timezone: 'UTC',
  };
}

function run(input: CheckInput, overrides: Partial<typeof defaults> = {}): Finding[] {
  return segmentsCheck.run(input, { ...defaults, ...overrides, per_platform: {} });
}

const onDay = (factor: number, which: string, days: string[] = [DAY]) => (value: string, day: string) => (value === which && days.includes(day) ? factor : 1);

describe('segments: one dimension value against the rest of the flow', () => {
  it('finds one region of four losing 70% of its people while the total falls about 17%, under the volume threshold', () => {
    const input = makeInput({ entering: onDay(0.3, 'east') });
    // The total moved less than volume's 30%: volume sees nothing.
    expect(volumeCheck.run(input, { ...volumeOptions.parse({}), per_platform: {} })).toEqual([]);
    const findings = run(input);
    expect(findings.length).toBeGreaterThan(0);
    expect(new Set(findings.map((f) => f.evidence?.value))).toEqual(new Set(['east']));
    const entry = findings.find((f) => f.subject.type === 'step' && f.platform === 'android')!;
    expect(entry).toMatchObject({ check: 'segments', kind: 'drop', subject: { name: 'intro' }, metric: 'people', direction: 'down', seriesKey: 'segments:entry:region=east:android:*' });
    // Arithmetic on the fixture: east is 24% of the flow; at 30% of its people the flow is 0.76 + 0.072 = 0.832 of
    // usual, where east's usual share predicts 0.24 x 0.832 = 0.2: it has 0.072 / 0.2 = 36% of that, and the people
    // lost against it, 0.2 - 0.072 = 0.128, are 0.128 / (0.2 + 0.76) = 13% of the flow's.
    expect(Number(entry.evidence!.usualShare)).toBeCloseTo(0.24, 1);
    expect(Number(entry.evidence!.lostShare)).toBeGreaterThan(0.09);
    expect(Number(entry.evidence!.lostShare)).toBeLessThan(0.17);
    expect(entry.observed / entry.expected.center).toBeCloseTo(0.36, 1);
    // Severity by the share of the flow lost: more than warn_loss (2%), less than page_loss (30%).
    expect(entry.severity).toBe('warn');
    expect(entry.message).toMatch(/^region=east on android, people entering at intro: \d[\d,]* people on 2026-11-17, \d+% below the [\d,]+ its usual 2\d% of the flow predicts/);
  });

  it('names the value as the cause: one segment incident with its usual share and the people lost', () => {
    const input = makeInput({ entering: onDay(0.3, 'east') });
    const drafts = analyseCauses(input, run(input));
    expect(drafts).toHaveLength(1);
    expect(drafts[0]!.cause).toMatchObject({ label: 'segment', segment: { dimension: 'region', value: 'east' } });
    // The incident is about the value across the flow, whichever of its series crossed a threshold that day.
    expect(drafts[0]!.fingerprint).toBe('monthly_pass|segment|monthly_pass|*|*|region=east');
    expect(drafts[0]!.cause.sentence).toMatch(/^region = east \(usually 2\d% of the flow's people\) lost [\d,]+ people on 2026-11-17/);
  });

  it('makes one incident with the total when the value is large enough to move it too (the explanatory-power ranking agrees)', () => {
    // north is 40% of the flow; losing all of it takes the total down 40%: volume reports the totals too.
    const input = makeInput({ entering: onDay(0, 'north') });
    const volume = volumeCheck.run(input, { ...volumeOptions.parse({}), per_platform: {} });
    expect(volume.length).toBeGreaterThan(0);
    const drafts = analyseCauses(input, [...volume, ...run(input)]);
    expect(drafts.map((d) => [d.cause.label, d.cause.segment?.value])).toEqual([['segment', 'north']]);
    expect(new Set(drafts[0]!.symptoms.map((f) => f.check))).toEqual(new Set(['volume', 'segments']));
  });

  it('reports a value whose conversion collapsed while its people did not', () => {
    const input = makeInput({ converting: onDay(0.2, 'west') });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.evidence?.value])).toContainEqual(['conversion_drop', 'west']);
    expect(findings.every((f) => f.evidence?.value === 'west')).toBe(true);
  });

  it('leaves a quiet small value alone: fewer than min_people expected, even when it halves', () => {
    // tiny is 1% of the flow: about 20 people on each platform, below min_people (50).
    const input = makeInput({ shares: { ...REGIONS, north: 0.39, tiny: 0.01 }, entering: onDay(0.3, 'tiny') });
    expect(run(input)).toEqual([]);
    // The floor is what keeps it out: lowered, the same drop is judged, and at 20 people a day 70% is a clear drop.
    expect(run(input, { min_people: 5 }).some((f) => f.evidence?.value === 'tiny')).toBe(true);
  });

  it('raises nothing on 40 ordinary days of noise over 4 values x 4 series x 3 platform views', () => {
    let findings = 0;
    for (let seed = 1; seed <= 40; seed++) findings += run(makeInput({ seed, end: addDays(DAY, seed) })).length;
    expect(findings).toBe(0);
  });

  it('leaves a move of everyone to the totals: a holiday halving every value is no segment finding', () => {
    expect(run(makeInput({ everyone: (day) => (day === DAY ? 0.5 : 1) }))).toEqual([]);
  });

  it('reports a drop on a declared low calendar day as a note with the calendar note, labelled calendar', () => {
    const calendar: CalendarDay[] = [{ day: DAY, note: 'east regional holiday', expect: 'low' }];
    const input = makeInput({ entering: onDay(0.3, 'east'), calendar });
    const findings = run(input);
    expect(findings.length).toBeGreaterThan(0);
    expect(findings.every((f) => f.severity === 'note' && f.calendar === 'east regional holiday')).toBe(true);
    expect(analyseCauses(input, findings).map((d) => d.cause.label)).toEqual(['calendar']);
  });

  it('reports only what Benjamini-Hochberg rejects at false_discovery_rate over the whole family of tests', () => {
    const input = makeInput({ entering: onDay(0.62, 'west') });
    const found = run(input, { min_score: 0 });
    expect(found.length).toBeGreaterThan(0);
    // Every value x series x platform view judged that day is one test: 4 x 4 x 3.
    expect(found.every((f) => f.evidence!.tests === 4 * 4 * 3 && Number(f.evidence!.pAdjusted) <= defaults.false_discovery_rate)).toBe(true);
    // At a rate below every p-value of the family nothing is rejected, though each drop still clears the other floors.
    expect(run(input, { min_score: 0, false_discovery_rate: 1e-300 })).toEqual([]);
  });

  it('watches only the max_values largest values of a dimension with many', () => {
    const shares: Record<string, number> = { big: 0.5 };
    for (let i = 0; i < 10; i++) shares[`v${i}`] = 0.05;
    const input = makeInput({ shares, base: 8000, entering: onDay(0.2, 'v9') });
    expect(run(input).some((f) => f.evidence?.value === 'v9')).toBe(true);
    // The ten equal values tie on size at most by chance; with room for only two, v9 must be among the largest to be watched.
    expect(run(input, { max_values: 2 }).filter((f) => f.evidence?.value === 'v9')).toEqual([]);
  });
});
