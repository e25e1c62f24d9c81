import { describe, expect, it } from 'vitest';
import { seasonalCheck } from '../../checks/seasonal/index.js';
import { judgeLatest } from '../../checks/stats/index.js';
import type { CheckModule, Day, EventDayRow, FunnelDayRow, WithPlatforms } from '../../checks/types.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import {
  DAY,
  daysEnding,
  describeInput,
  eventDay,
  flowConfig,
  flowDefinition,
  funnelDay,
  makeInput,
  normal,
  optionsOf,
  prng,
  weeklyCounts,
  type FlowFile,
} from './fixtures-seasonal-conversion.js';
import { readFixture } from '../stats/support.js';

type Options = WithPlatforms<Record<string, unknown>>;
const days = daysEnding(DAY, 120);
const run = (input: ReturnType<typeof makeInput>, given: Record<string, unknown> = {}) =>
  seasonalCheck.run(input, optionsOf<Options>('seasonal', given) as Parameters<typeof seasonalCheck.run>[1]);
const KEY = 'seasonal:people:screen_shown:web:*';

/** screen_shown people on a platform: a weekly pattern around `level` with `noise` (relative sd), the judged day replaced by `today` (undefined: no row). */
function views(platform: string, today: number | undefined, level = 1000, noise = 0.03, seed = 7): EventDayRow[] {
  const values = weeklyCounts(days, level, noise, seed);
  return days.flatMap((day, i) => (day !== DAY ? [eventDay(day, platform, 'screen_shown', values[i]!)] : today === undefined ? [] : [eventDay(day, platform, 'screen_shown', today)]));
}

/** The usual value of DAY (a Wednesday: WEEKLY[3] = 1.01) at `level`. */
const usual = (level = 1000) => level * 1.01;

describe('seasonal check', () => {
  // Outside reference: the detector's recipe computed in R (test/fixtures/seasonal-esd/runner.R, case
  // counts-log1p-halved: Poisson counts with a multiplicative weekly pattern, the last day halved, on log(1 + x) at 0.005).
  it('reports a count far below its weekday profile as R computes the recipe, with every field filled', () => {
    const r = (JSON.parse(readFixture('seasonal-esd', 'detector.json')) as { cases: Array<{ case: string; input: number[]; expected: number; low: number; high: number; score: number }> }).cases.find(
      (c) => c.case === 'counts-log1p-halved',
    )!;
    const window = daysEnding(DAY, r.input.length);
    const today = r.input[r.input.length - 1]!;
    const input = makeInput({ days: window, events: window.map((day, i) => eventDay(day, 'web', 'screen_shown', r.input[i]!)) });
    const findings = run(input);
    expect(findings, describeInput(input)).toHaveLength(1);
    const finding = findings[0]!;
    expect(finding).toMatchObject({
      check: 'seasonal',
      kind: 'below',
      flow: 'monthly_pass',
      subject: { type: 'event', name: 'screen_shown', event: 'screen_shown' },
      metric: 'people',
      platform: 'web',
      version: null,
      day: DAY,
      since: DAY,
      observed: today,
      direction: 'down',
      severity: 'warn',
      seriesKey: KEY,
      evidence: { method: 'stl-esd', history_days: 83, people: today },
    });
    // R runs stl's 15 robustness passes, the detector stops by the stlez rule: within 1% of the band.
    const width = r.high - r.low;
    expect(Math.abs(finding.expected.center - r.expected)).toBeLessThan(0.01 * width);
    expect(Math.abs(finding.expected.low - r.low)).toBeLessThan(0.01 * width);
    expect(Math.abs(finding.expected.high - r.high)).toBeLessThan(0.01 * width);
    expect(Math.abs(finding.score - r.score)).toBeLessThan(0.05);
    expect(finding.message).toMatch(new RegExp(`^web screen_shown people ${today} on a Wednesday, expected \\d+ to \\d+ \\(usual \\d+, -\\d+%\\)$`));
    expect(finding.excerpt).toHaveLength(28);
    expect(finding.excerpt.at(-1)).toMatchObject({ day: DAY, value: today, flagged: true });
    expect(finding.excerpt.every((point) => point.expectedLow !== undefined && point.expectedHigh !== undefined)).toBe(true);
  });

  it('reads a day without rows as 0 when the platform sent other events, as unknown when it sent nothing', () => {
    const silent = makeInput({ events: views('web', undefined) });
    expect(run(silent), describeInput(silent)).toMatchObject([{ seriesKey: KEY, observed: 0, kind: 'below' }]);
    const dark = makeInput({ events: views('web', undefined), status: [] });
    expect(run(dark), describeInput(dark)).toEqual([]);
  });

  it('near miss on the change floor: a clear but 15% move is not reported, 25% is', () => {
    const small = makeInput({ events: views('web', Math.round(usual() * 0.85), 1000, 0.01) });
    const large = makeInput({ events: views('web', Math.round(usual() * 0.75), 1000, 0.01) });
    // The detector alone flags both (1% noise): only the practical floor (min_change 20%) tells them apart.
    expect(judgeLatest(small.events.map((row) => row.people), { alpha: 0.005, transform: 'log1p' }).anomalous).toBe(true);
    expect(run(small), describeInput(small)).toEqual([]);
    expect(run(large), describeInput(large)).toHaveLength(1);
  });

  it('needs min_people expected: a small series is too small to judge', () => {
    const input = makeInput({ events: views('web', 30, 60) });
    expect(run(input), describeInput(input)).toEqual([]);
    expect(run(input, { min_people: 50 }), describeInput(input)).toHaveLength(1);
  });

  it('on a declared low day a drop is a note with the calendar label; on a high day it keeps its severity', () => {
    const low = makeInput({ events: views('web', 505), calendar: [{ day: DAY, note: 'Thanksgiving', expect: 'low' }] });
    const high = makeInput({ events: views('web', 505), calendar: [{ day: DAY, note: 'month-start pass renewals', expect: 'high' }] });
    expect(run(low), describeInput(low)).toMatchObject([{ severity: 'note', calendar: 'Thanksgiving' }]);
    expect(run(high), describeInput(high)).toMatchObject([{ severity: 'warn', calendar: 'month-start pass renewals' }]);
  });

  it('applies per-platform overrides', () => {
    const flow = flowDefinition({ platforms: ['web', 'ios'] });
    const input = makeInput({ flow, events: [...views('web', 505), ...views('ios', 505, 1000, 0.03, 11)] });
    expect(run(input).map((f) => f.platform), describeInput(input)).toEqual(['web', 'ios']);
    expect(run(input, { per_platform: { ios: { direction: 'up' } } }).map((f) => f.platform), describeInput(input)).toEqual(['web']);
  });

  it('keeps calendar days and days already judged anomalous out of the baseline', () => {
    const before = days.slice(-4, -1);
    const input = makeInput({ events: views('web', 505), anomalous: { [KEY]: before }, calendar: [{ day: days[100]!, note: 'Labor Day', expect: 'low' }] });
    const finding = run(input)[0];
    expect(finding, describeInput(input)).toBeDefined();
    // 84 history days in the detector's window, 4 of them left out.
    expect(finding!.evidence!.history_days).toBe(80);
    expect(finding!.since).toBe(before[0]);
    const series = days.map((day) => input.events.find((row) => row.day === day)!.people);
    const excluded = days.map((day) => before.includes(day) || day === days[100]);
    const reference = judgeLatest(series, { alpha: 0.005, excluded, transform: 'log1p' });
    expect(finding!.expected.center).toBe(reference.expected);
  });

  it('widens a rate band to the day binomial error: a small cohort may wander more', () => {
    const rand = prng(3);
    // intro -> zone around 80% with 0.2 pp of day-to-day spread, 5,000 people a day.
    const funnel = (todayIntro: number, todayZone: number): FunnelDayRow[] =>
      days.flatMap((day) => {
        if (day === DAY) return funnelDay(day, 'web', [todayIntro, todayZone, Math.round(todayZone * 0.75)]);
        const zone = Math.round(5000 * (0.8 + 0.002 * normal(rand)));
        return funnelDay(day, 'web', [5000, zone, Math.round(zone * 0.75)]);
      });
    const rateKey = 'seasonal:conversion:intro->zone:web:*';
    const small = makeInput({ funnel: funnel(150, 114) });
    const large = makeInput({ funnel: funnel(5000, 3800) });
    // 76% against 80%: 4 pp, far outside the 0.2 pp spread, but within 150 people's binomial error (3.3 pp x critical).
    expect(run(small).filter((f) => f.seriesKey === rateKey), describeInput(small)).toEqual([]);
    const finding = run(large).find((f) => f.seriesKey === rateKey);
    expect(finding, describeInput(large)).toMatchObject({ metric: 'conversion', kind: 'below', observed: 0.76, subject: { type: 'step', name: 'zone' } });
    expect(finding!.message).toMatch(/^web intro -> zone conversion 76\.0% on a Wednesday, expected \d+\.\d% to \d+\.\d% \(usual \d+\.\d%, -\d\.\d pp\)$/);
  });

  it('judges median step times in seconds, with their own floor', () => {
    const rand = prng(5);
    const funnel = (today: number, timed = 800): FunnelDayRow[] =>
      days.flatMap((day) =>
        funnelDay(day, 'web', [1000, 800, 600], {
          secondsMedian: [null, day === DAY ? today : 40 + normal(rand), 90],
          timed: [0, day === DAY ? timed : 800, 600],
        }),
      );
    const key = 'seasonal:step_seconds:zone:web:*';
    const slower = makeInput({ funnel: funnel(80) });
    const bit = makeInput({ funnel: funnel(65) });
    const few = makeInput({ funnel: funnel(80, 99) });
    expect(run(slower).find((f) => f.seriesKey === key), describeInput(slower)).toMatchObject({ metric: 'step_seconds_median', kind: 'above', direction: 'up', observed: 80 });
    // Slower is the bad direction of a time: reported by default (time_direction up), not with time_direction down.
    expect(run(slower, { time_direction: 'down' }).filter((f) => f.seriesKey === key), describeInput(slower)).toEqual([]);
    // +25 s and x1.6: below both floors (30 s, x2).
    expect(run(bit).filter((f) => f.seriesKey === key), describeInput(bit)).toEqual([]);
    expect(run(few).filter((f) => f.seriesKey === key), describeInput(few)).toEqual([]);
  });

  // Issue 15: a release that tripled a 16-second step (about 45 s) moved it by less than the 30-second floor and went
  // unreported; a doubling is now always worth a finding.
  it('reports a short step whose time nearly tripled, below the seconds floor, by its factor', () => {
    const rand = prng(8);
    const funnel = (today: number): FunnelDayRow[] =>
      days.flatMap((day) =>
        funnelDay(day, 'web', [1000, 800, 600], { secondsMedian: [null, day === DAY ? today : 16 + 0.8 * normal(rand), 90], timed: [0, 800, 600] }),
      );
    const key = 'seasonal:step_seconds:zone:web:*';
    const tripled = makeInput({ funnel: funnel(45) });
    const finding = run(tripled).find((f) => f.seriesKey === key);
    expect(finding, describeInput(tripled)).toMatchObject({ kind: 'above', direction: 'up', observed: 45 });
    expect(finding!.observed - finding!.expected.center).toBeLessThan(30);
    // A factor floor of 3 (set higher than the move) keeps it out: the factor is what reported it.
    expect(run(tripled, { min_change_factor: 3 }).filter((f) => f.seriesKey === key), describeInput(tripled)).toEqual([]);
  });

  // Issue 15: a step converting at 2% could never move 3 points, so even a fall to 0 went unreported.
  it('reports a low-rate step falling to zero, below the points floor, by its relative change', () => {
    const rand = prng(9);
    const funnel = (todayDone: number): FunnelDayRow[] =>
      days.flatMap((day) => {
        const zone = 2000;
        const done = day === DAY ? todayDone : Math.round(zone * (0.02 + 0.002 * normal(rand)));
        return funnelDay(day, 'web', [2500, zone, done]);
      });
    const key = 'seasonal:conversion:zone->done:web:*';
    const zero = makeInput({ funnel: funnel(0) });
    const finding = run(zero).find((f) => f.seriesKey === key);
    expect(finding, describeInput(zero)).toMatchObject({ kind: 'below', observed: 0, metric: 'conversion' });
    expect(100 * (finding!.expected.center - finding!.observed)).toBeLessThan(3);
    // 4 of 2,000 (0.2%, down 90% and 1.7 points): reported at the default 50%, not when the relative floor asks 100%.
    const nearly = makeInput({ funnel: funnel(4) });
    expect(run(nearly).filter((f) => f.seriesKey === key), describeInput(nearly)).toHaveLength(1);
    expect(run(nearly, { min_change_relative: 1 }).filter((f) => f.seriesKey === key), describeInput(nearly)).toEqual([]);
  });

  // Issue 15, counts on log(1 + x): weekends at a quarter of a weekday with 4% noise have a quarter of a weekday's
  // spread; on the raw scale one spread for all days hid a Sunday down 25%.
  it('judges counts on the log scale: a Sunday down 25% is reported', () => {
    const sunday = '2026-10-18';
    const window = daysEnding(sunday, 120);
    const rand = prng(12);
    const shape = [0.25, 1, 1, 1, 1, 1, 0.25];
    const values = window.map((day) => Math.round(2000 * shape[new Date(`${day}T12:00:00Z`).getUTCDay()]! * (1 + 0.04 * normal(rand))));
    values[values.length - 1] = 375;
    const input = makeInput({ days: window, events: window.map((day, i) => eventDay(day, 'web', 'screen_shown', values[i]!)) });
    expect(judgeLatest(values, { alpha: 0.005 }).anomalous, 'the raw scale misses it').toBe(false);
    expect(run(input), describeInput(input)).toMatchObject([{ seriesKey: KEY, kind: 'below', observed: 375, metric: 'people' }]);
  });

  it('stays quiet on a clean series day after day', () => {
    const flagged: Day[] = [];
    for (const last of days.slice(-28)) {
      const window = daysEnding(last, 120);
      const values = weeklyCounts(window, 1000, 0.03, 13);
      const input = makeInput({ days: window, events: window.map((day, i) => eventDay(day, 'web', 'screen_shown', values[i]!)) });
      if (run(input).length > 0) flagged.push(last);
    }
    expect(flagged).toEqual([]);
  });

  it('mutes through judgeDay', () => {
    const file: FlowFile = { mutes: [{ check: 'seasonal', platform: 'web', subject: 'screen_shown', until: '2026-12-15', reason: 'web redesign test' }] };
    const input = makeInput({ events: views('web', 505) });
    const judged = judgeDay(input, flowConfig(file), [seasonalCheck as unknown as CheckModule]);
    expect(judged.errors).toEqual([]);
    expect(judged.findings, describeInput(input)).toMatchObject([{ seriesKey: KEY, muted: 'web redesign test' }]);
  });
});
