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
  it('reports a count far below its weekday profile, as the detector judges it, with every field filled', () => {
    const input = makeInput({ events: views('web', 505) });
    const findings = run(input);
    expect(findings, describeInput(input)).toHaveLength(1);
    const finding = findings[0]!;
    // Reference: the statistics library's detector on the same series (itself tested against R's stl and NIST's ESD examples).
    const series = days.map((day) => input.events.find((row) => row.day === day)!.people);
    const reference = judgeLatest(series, { alpha: 0.005 });
    expect(reference.anomalous).toBe(true);
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
      observed: 505,
      direction: 'down',
      severity: 'warn',
      seriesKey: KEY,
      score: reference.score,
      // The usual value is the centre of the detector's band (see centred() in the check).
      expected: { center: (reference.low + reference.high) / 2, low: reference.low, high: reference.high },
      evidence: { method: 'stl-esd', history_days: 84, people: 505 },
    });
    expect(finding.message).toMatch(/^web screen_shown people 505 on a Wednesday, expected [\d,]+ to [\d,]+ \(usual [\d,]+, -\d+%\)$/);
    expect(finding.excerpt).toHaveLength(28);
    expect(finding.excerpt.at(-1)).toMatchObject({ day: DAY, value: 505, flagged: true });
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
    expect(judgeLatest(small.events.map((row) => row.people), { alpha: 0.005 }).anomalous).toBe(true);
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
    const reference = judgeLatest(series, { alpha: 0.005, excluded });
    expect(finding!.expected.center).toBe((reference.low + reference.high) / 2);
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
    const both = { direction: 'both' };
    expect(run(slower, both).find((f) => f.seriesKey === key), describeInput(slower)).toMatchObject({ metric: 'step_seconds_median', kind: 'above', direction: 'up', observed: 80 });
    // Slower is a rise: the default direction (down) does not report it.
    expect(run(slower).filter((f) => f.seriesKey === key), describeInput(slower)).toEqual([]);
    expect(run(bit, both).filter((f) => f.seriesKey === key), describeInput(bit)).toEqual([]);
    expect(run(few, both).filter((f) => f.seriesKey === key), describeInput(few)).toEqual([]);
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
