import { describe, expect, it } from 'vitest';
import type { CheckInput, Finding } from '../../checks/types.js';
import { options, volumeCheck } from '../../checks/volume/index.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import { daysEnding, describeInput, flowConfig, makeInput, usual, withPlatforms, type SeriesSpec } from './fixtures-volume-freshness.js';

// Reference values below are arithmetic on the fixture (usual(base) = base x weekday shape x a +-3% wobble);
// the thresholds are the check's defaults (max_drop 30%, page_drop 50%, max_rise 150%, events per person +-50%,
// min_people 50, min_score 4), whose choice is common practice, tuned on the demo data (see the report).
const DAY = '2026-11-17'; // a Tuesday
const defaults = options.parse({});

function run(input: CheckInput, overrides: Partial<typeof defaults> = {}, perPlatform: Record<string, Partial<typeof defaults>> = {}): Finding[] {
  return volumeCheck.run(input, withPlatforms({ ...defaults, ...overrides }, perPlatform));
}

/** A series that follows its usual weekday shape, with `today` as the factor of the usual on the judged day. */
function series(platform: string, target: { event?: string; step?: number }, base: number, today = 1): SeriesSpec {
  const shape = usual(base);
  return { platform, ...target, people: (day, i) => (day === DAY ? Math.round(shape(day, i) * today) : shape(day, i)) };
}

const RIDER = { step: 1 };

describe('volume: people per event and step', () => {
  it('reports a drop of more than max_drop below the weekday expectation', () => {
    const input = makeInput({ end: DAY, series: [series('android', RIDER, 1000, 0.6), series('web', RIDER, 1000)] });
    const findings = run(input);
    expect(findings, describeInput(input)).toHaveLength(1);
    const [f] = findings as [Finding];
    const why = describeInput(input);
    expect(f, why).toMatchObject({
      check: 'volume',
      kind: 'drop',
      flow: 'monthly_pass',
      subject: { type: 'step', name: 'rider', event: 'screen_shown', step: 'rider' },
      metric: 'people',
      platform: 'android',
      version: null,
      day: DAY,
      since: DAY,
      direction: 'down',
      severity: 'warn',
      seriesKey: 'volume:people:step:rider:android:*',
    });
    // Tuesdays are 1.03 x 1000 with a +-3% wobble: the median of four lies within 1000-1061.
    expect(f.expected.center, why).toBeGreaterThan(1000);
    expect(f.expected.center, why).toBeLessThan(1061);
    expect(f.observed / f.expected.center, why).toBeCloseTo(0.6, 1);
    expect(f.expected.low, why).toBeLessThanOrEqual(0.7 * f.expected.center);
    expect(f.score, why).toBeLessThan(-4);
    expect(f.excerpt).toHaveLength(28);
    expect(f.excerpt.at(-1)).toMatchObject({ day: DAY, flagged: true });
    expect(f.excerpt.at(-1)!.expectedLow).toBeCloseTo(f.expected.low, 6);
    expect(f.message).toContain('android step rider (screen_shown view=rider_details)');
    expect(f.message).toContain(`${Math.round(100 * (1 - f.observed / f.expected.center))}% below the usual`);
    expect(f.evidence).toMatchObject({ people: f.observed, sameWeekdays: 4 });
  });

  it('pages when the drop exceeds page_drop', () => {
    const input = makeInput({ end: DAY, series: [series('android', RIDER, 1000, 0.3)] });
    expect(run(input).map((f) => [f.kind, f.severity]), describeInput(input)).toEqual([['drop', 'page']]);
  });

  it('stays quiet just inside max_drop and reports just outside it', () => {
    const inside = makeInput({ end: DAY, series: [series('android', RIDER, 2000, 0.75)] });
    expect(run(inside), describeInput(inside)).toEqual([]);
    const outside = makeInput({ end: DAY, series: [series('android', RIDER, 2000, 0.65)] });
    expect(run(outside).map((f) => f.kind), describeInput(outside)).toEqual(['drop']);
  });

  it('leaves series under min_people alone, however far they fall', () => {
    const input = makeInput({ end: DAY, series: [series('android', RIDER, 40, 0.2)] });
    expect(run(input), describeInput(input)).toEqual([]);
    // The same series with a lower floor is reported: the floor is what kept it quiet.
    expect(run(input, { min_people: 20 }).map((f) => f.kind), describeInput(input)).toEqual(['drop']);
  });

  it('does not report a drop that sits within the series own day-to-day noise', () => {
    // +-40% swings every day: a 35% dip is ordinary for this series.
    const noisy: SeriesSpec = { platform: 'android', step: 1, people: (day, i) => (day === DAY ? 650 : Math.round(1000 * (i % 2 === 0 ? 1.4 : 0.6))) };
    const input = makeInput({ end: DAY, series: [noisy] });
    expect(run(input), describeInput(input)).toEqual([]);
  });

  it('reports a rise above max_rise, and not a declared month-start high', () => {
    const rise = makeInput({ end: DAY, series: [series('web', { event: 'pass_purchase_result' }, 500, 3)] });
    expect(run(rise).map((f) => [f.kind, f.direction, f.severity]), describeInput(rise)).toEqual([['rise', 'up', 'warn']]);
    const calendar = [{ day: DAY, note: 'month-start pass renewals', expect: 'high' as const }];
    const renewals = makeInput({ end: DAY, calendar, series: [series('web', { event: 'pass_purchase_result' }, 500, 1.8)] });
    expect(run(renewals), describeInput(renewals)).toEqual([]);
  });

  it('counts ids only from platform totals: version and dimension rows are left out', () => {
    const input = makeInput({ end: DAY, series: [series('android', { event: 'screen_shown' }, 1000)] });
    input.events.push(
      { day: DAY, event: 'screen_shown', platform: 'android', version: '7.4.0', dimension: '', value: '', events: 9000, people: 6000 },
      { day: DAY, event: 'screen_shown', platform: 'android', version: '*', dimension: 'country', value: 'CA', events: 9000, people: 6000 },
    );
    expect(run(input), describeInput(input)).toEqual([]);
  });
});

describe('volume: silence', () => {
  it('pages when a series with steady people sends nothing while its platform sends other events', () => {
    const gone: SeriesSpec = { platform: 'web', step: 1, people: (day, i) => (day === DAY ? null : usual(800)(day, i)) };
    const input = makeInput({ end: DAY, series: [gone] });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.severity, f.observed]), describeInput(input)).toEqual([['silent', 'page', 0]]);
    expect(findings[0]!.seriesKey).toBe('volume:people:step:rider:web:*');
  });

  it('reads a missing day as unknown when the platform sent nothing at all', () => {
    const gone: SeriesSpec = { platform: 'web', step: 1, people: (day, i) => (day === DAY ? null : usual(800)(day, i)) };
    const input = makeInput({ end: DAY, series: [gone] });
    input.status = input.status.filter((row) => !(row.day === DAY && row.platform === 'web'));
    expect(run(input), describeInput(input)).toEqual([]);
  });

  it('reads days before a series first appeared as unknown, not as zeros', () => {
    const days = daysEnding(DAY, 84);
    const start = days[50]!;
    const fresh: SeriesSpec = { platform: 'android', step: 1, people: (day, i) => (day < start ? null : usual(800)(day, i)) };
    const input = makeInput({ end: DAY, series: [fresh] });
    expect(run(input), describeInput(input)).toEqual([]);
  });
});

describe('volume: events per person', () => {
  it('reports an event sent twice per person', () => {
    const twice: SeriesSpec = { platform: 'android', event: 'pass_purchase_result', people: usual(700), perPerson: (day) => (day === DAY ? 2.02 : 1.01) };
    const input = makeInput({ end: DAY, series: [twice] });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.metric, f.direction, f.severity]), describeInput(input)).toEqual([['events_per_person', 'events_per_person', 'up', 'warn']]);
    expect(findings[0]!.observed, describeInput(input)).toBeCloseTo(2.02, 2);
    expect(findings[0]!.expected.center, describeInput(input)).toBeCloseTo(1.01, 2);
    expect(findings[0]!.seriesKey).toBe('volume:events_per_person:pass_purchase_result:android:*');
  });

  it('leaves a step change to its event when the event changed the same way', () => {
    const perPerson = (day: string) => (day === DAY ? 3 : 1.5);
    const input = makeInput({
      end: DAY,
      series: [
        { platform: 'android', event: 'screen_shown', people: usual(3000), perPerson },
        { platform: 'android', step: 1, people: usual(900), perPerson },
      ],
    });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.subject.type]), describeInput(input)).toEqual([['events_per_person', 'event']]);
  });

  it('stays quiet within max_events_per_person_change', () => {
    const input = makeInput({ end: DAY, series: [{ platform: 'android', event: 'screen_shown', people: usual(3000), perPerson: (day) => (day === DAY ? 2.1 : 1.5) }] });
    expect(run(input), describeInput(input)).toEqual([]);
  });
});

describe('volume: calendar, per-platform options, baselines, mutes', () => {
  it('reports a drop on a declared low day as a note with the calendar note', () => {
    const calendar = [{ day: DAY, note: 'Labor Day', expect: 'low' as const }];
    const input = makeInput({ end: DAY, calendar, series: [series('web', RIDER, 1000, 0.55)] });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.severity, f.calendar]), describeInput(input)).toEqual([['drop', 'note', 'Labor Day']]);
    expect(findings[0]!.message).toContain('Labor Day');
  });

  it('keeps the severity of a silence on a declared low day: a holiday explains fewer people, not none', () => {
    const calendar = [{ day: DAY, note: 'Labor Day', expect: 'low' as const }];
    const gone: SeriesSpec = { platform: 'web', step: 1, people: (day, i) => (day === DAY ? null : usual(800)(day, i)) };
    const input = makeInput({ end: DAY, calendar, series: [gone] });
    expect(run(input).map((f) => [f.kind, f.severity, f.calendar]), describeInput(input)).toEqual([['silent', 'page', 'Labor Day']]);
  });

  it('applies per-platform overrides', () => {
    const input = makeInput({ end: DAY, series: [series('android', RIDER, 1000, 0.6), series('web', RIDER, 1000, 0.6)] });
    const findings = run(input, {}, { android: { max_drop: 0.5 } });
    expect(findings.map((f) => f.platform), describeInput(input)).toEqual(['web']);
  });

  it('measures a long incident against the days before it: anomalous days stay out of the baseline', () => {
    const days = daysEnding(DAY, 84);
    const incident = days.slice(-22, -1);
    const low: SeriesSpec = { platform: 'android', step: 1, people: (day, i) => Math.round(usual(1000)(day, i) * (day >= incident[0]! ? 0.1 : 1)) };
    const flagged = makeInput({ end: DAY, series: [low], anomalous: { 'volume:people:step:rider:android:*': incident } });
    const findings = run(flagged);
    expect(findings.map((f) => [f.kind, f.since]), describeInput(flagged)).toEqual([['drop', incident[0]]]);
    expect(findings[0]!.expected.center, describeInput(flagged)).toBeGreaterThan(1000);
    // Without the earlier findings the baseline has learnt the low level and sees nothing.
    const unflagged = makeInput({ end: DAY, series: [low] });
    expect(run(unflagged), describeInput(unflagged)).toEqual([]);
  });

  it('keeps calendar days out of the baseline', () => {
    const days = daysEnding(DAY, 84);
    // The three previous Tuesdays were declared half-empty holidays.
    const holidays = [days[days.length - 8]!, days[days.length - 15]!, days[days.length - 22]!];
    const calendar = holidays.map((day) => ({ day, note: 'strike', expect: 'low' as const }));
    const spec: SeriesSpec = { platform: 'android', step: 1, people: (day, i) => Math.round(usual(1000)(day, i) * (holidays.includes(day) ? 0.5 : day === DAY ? 0.6 : 1)) };
    const input = makeInput({ end: DAY, calendar, series: [spec] });
    const findings = run(input);
    expect(findings.map((f) => f.kind), describeInput(input)).toEqual(['drop']);
    expect(findings[0]!.expected.center, describeInput(input)).toBeGreaterThan(1000);
  });

  it('is muted through judgeDay by a flow mute for its platform', () => {
    const input = makeInput({ end: DAY, series: [series('android', RIDER, 1000, 0.3), series('web', RIDER, 1000, 0.3)] });
    const config = flowConfig([volumeCheck], { mutes: [{ check: 'volume', platform: 'android', until: '2026-12-31', reason: 'rider screen redesign' }] });
    const judgement = judgeDay(input, config, [volumeCheck]);
    expect(judgement.errors).toEqual([]);
    expect(judgement.findings.map((f) => [f.platform, f.muted]), describeInput(input)).toEqual([
      ['web', undefined],
      ['android', 'rider screen redesign'],
    ]);
  });
});
