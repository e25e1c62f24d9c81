import { describe, expect, it } from 'vitest';
import { clockHours } from '../../checks/freshness/hours.js';
import { freshnessCheck, options } from '../../checks/freshness/index.js';
import { addDays, dayEnd } from '../../checks/time.js';
import type { CheckInput, Finding } from '../../checks/types.js';
import { volumeCheck } from '../../checks/volume/index.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import { daysEnding, describeInput, flowConfig, makeInput, statusRows, usual, withPlatforms, type StatusSpec } from './fixtures-volume-freshness.js';

// Reference values are arithmetic on the fixture's hourly shape (HOUR_SHAPE in the fixture: raw weights
// summing to 101.7, of which 53 fall from 14:00 on, so a stop at 14:00 misses 53 / 101.7 = 52.1% of a day).
// Thresholds are the check's defaults (max_lag 3h, min_tail_share 40%, min_missing_events 20,
// min_restated_change 1%, duplicates_rise 50%), chosen as common practice and checked on the demo data.
const DAY = '2026-11-17';
const defaults = options.parse({});

function opts(overrides: Partial<typeof defaults> = {}, perPlatform: Record<string, Partial<typeof defaults>> = {}) {
  return withPlatforms({ ...defaults, ...overrides }, perPlatform);
}

/** Four weeks of complete days, then the judged day as `today` describes it per platform. */
function input(today: (platform: string) => StatusSpec | undefined, extra: { timezone?: string; end?: string; now?: string } = {}): CheckInput {
  const end = extra.end ?? DAY;
  const timezone = extra.timezone ?? 'UTC';
  const days = daysEnding(end, 35);
  return makeInput({ end, days: 35, timezone, status: statusRows(days, (day, platform) => (day === end ? today(platform) : undefined), timezone), ...(extra.now ? { now: extra.now } : {}) });
}

function dump(i: CheckInput): string {
  return JSON.stringify(i.status.filter((row) => row.day >= addDays(i.day, -1)), null, 1);
}

describe('freshness: incomplete days', () => {
  it('holds a day back whose events stopped at 14:00 on every platform, and says so', () => {
    const i = input(() => ({ stopAt: '14:00' }));
    const readiness = freshnessCheck.gate!(i, opts());
    expect(readiness.ready, dump(i)).toBe(false);
    expect(readiness.reason).toBe(`events for ${DAY}: stopped at 14:00 on web, stopped at 14:00 on android; ${DAY} not judged yet`);
    const findings = freshnessCheck.run(i, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.severity]), dump(i)).toEqual([
      ['partial_day', 'web', 'warn'],
      ['partial_day', 'android', 'warn'],
    ]);
    const [f] = findings as [Finding];
    expect(f, dump(i)).toMatchObject({ check: 'freshness', subject: { type: 'day', name: DAY }, metric: 'events', direction: 'down', seriesKey: 'freshness:day:web', since: DAY });
    expect(f.message).toBe(`events for ${DAY} from web stopped at 14:00 (about 52% of the day's events missing); ${DAY} not judged yet`);
    expect(f.score, dump(i)).toBeCloseTo(53 / 101.7, 2);
    expect(f.expected.center, dump(i)).toBeCloseTo(10_000, -2);
    expect(f.evidence, dump(i)).toMatchObject({ stoppedAt: '14:00', lagSeconds: 10 * 3600 + 1 });
  });

  it('waits for a day that is not over, without a finding', () => {
    const i = input(() => ({ stopAt: '14:00' }), { now: `${DAY}T14:05:00.000Z` });
    expect(freshnessCheck.gate!(i, opts())).toEqual({ ready: false, reason: `${DAY} is not over yet (clock ${DAY}T14:05:00.000Z)` });
    expect(freshnessCheck.run(i, opts())).toEqual([]);
  });

  it('tolerates a newest event just inside max_lag and reports one just outside', () => {
    const inside = input(() => ({ stopAt: '21:30' }));
    expect(freshnessCheck.gate!(inside, opts()), dump(inside)).toEqual({ ready: true });
    expect(freshnessCheck.run(inside, opts()), dump(inside)).toEqual([]);
    const outside = input(() => ({ stopAt: '20:30' }));
    expect(freshnessCheck.gate!(outside, opts()).ready, dump(outside)).toBe(false);
  });

  it('does not mistake the quiet evening of a small platform for a stop', () => {
    // 150 events a day: after 20:30 about 150 x 11.5 / 101.7 = 17 are due, under min_missing_events.
    const days = daysEnding(DAY, 35);
    const small = makeInput({ end: DAY, days: 35, status: statusRows(days, (day) => ({ events: 150, ...(day === DAY ? { stopAt: '20:30' } : {}) })) });
    expect(freshnessCheck.gate!(small, opts()), dump(small)).toEqual({ ready: true });
    // Ten times the traffic with the same stop misses about 170 events: that is a stop.
    const big = makeInput({ end: DAY, days: 35, status: statusRows(days, (day) => ({ events: 1500, ...(day === DAY ? { stopAt: '20:30' } : {}) })) });
    expect(freshnessCheck.gate!(big, opts()).ready, dump(big)).toBe(false);
  });

  it('reports a slow trickle at the end of the day', () => {
    const slow = input((platform) => (platform === 'android' ? { thinFactor: 0.2 } : undefined));
    const findings = freshnessCheck.run(slow, opts());
    expect(findings.map((f) => [f.kind, f.platform]), dump(slow)).toEqual([['slow_day_end', 'android']]);
    expect(findings[0]!.message).toMatch(/thinned out in the last 3 h: [\d,]+ where about [\d,]+ were due/);
    expect(freshnessCheck.gate!(slow, opts()).ready).toBe(false);
    const fine = input((platform) => (platform === 'android' ? { thinFactor: 0.6 } : undefined));
    expect(freshnessCheck.run(fine, opts()), dump(fine)).toEqual([]);
  });

  it('reports a platform that sent nothing at all', () => {
    const i = input(() => undefined);
    i.status = i.status.filter((row) => !(row.day === DAY && row.platform === 'android'));
    const findings = freshnessCheck.run(i, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.observed]), dump(i)).toEqual([['no_events', 'android', 0]]);
    expect(freshnessCheck.gate!(i, opts()).reason).toBe(`events for ${DAY}: none from android; ${DAY} not judged yet`);
  });

  it('aligns the hours of DST days with the local clock', () => {
    // America/New_York 2026 (IANA tz rules): clocks go forward at 02:00 on 03-08 and back at 02:00 on 11-01.
    const hours = (from: number, to: number) => Array.from({ length: to - from + 1 }, (_, i) => from + i);
    expect(clockHours('2026-03-08', 'America/New_York', 23)).toEqual([0, 1, ...hours(3, 23)]);
    expect(clockHours('2026-11-01', 'America/New_York', 25)).toEqual([0, 1, 1, ...hours(2, 23)]);
    expect(clockHours('2026-11-02', 'America/New_York', 24)).toEqual(hours(0, 23));
  });

  it.each([
    ['the 25-hour day clocks go back', '2026-11-01'],
    ['the day after it', '2026-11-02'],
    ['the 23-hour day clocks go forward', '2026-03-08'],
  ])('judges %s by the local clock hours (DST)', (_label, day) => {
    const complete = input(() => undefined, { timezone: 'America/New_York', end: day });
    expect(freshnessCheck.gate!(complete, opts()), dump(complete)).toEqual({ ready: true });
    const stopped = input(() => ({ stopAt: '14:00' }), { timezone: 'America/New_York', end: day });
    const findings = freshnessCheck.run(stopped, opts());
    expect(findings.map((f) => f.evidence?.stoppedAt), dump(stopped)).toEqual(['14:00', '14:00']);
  });

  it('keeps the severity on a declared calendar day and attaches the note', () => {
    const i = input(() => ({ stopAt: '14:00' }));
    i.calendar = [{ day: DAY, note: 'Labor Day', expect: 'low' }];
    expect(freshnessCheck.run(i, opts()).map((f) => [f.severity, f.calendar])).toEqual([
      ['warn', 'Labor Day'],
      ['warn', 'Labor Day'],
    ]);
  });

  it('applies per-platform overrides', () => {
    const i = input(() => ({ stopAt: '18:00' }));
    const findings = freshnessCheck.run(i, opts({}, { android: { max_lag: 8 * 3600 } }));
    expect(findings.map((f) => f.platform), dump(i)).toEqual(['web']);
  });

  it('builds the hourly profile without days already found incomplete', () => {
    // The three weeks before were cut at 12:00 and reported; the day itself is cut at 12:00 too.
    const days = daysEnding(DAY, 35);
    const cut = days.slice(-22, -1);
    const status = statusRows(days, (day, platform) => (platform === 'web' && (cut.includes(day) || day === DAY) ? { stopAt: '12:00' } : undefined));
    const flagged = makeInput({ end: DAY, days: 35, status, anomalous: { 'freshness:day:web': cut } });
    expect(freshnessCheck.run(flagged, opts()).map((f) => [f.kind, f.platform]), dump(flagged)).toEqual([['partial_day', 'web']]);
    // Learning from those days, the profile would expect nothing after noon and miss the stop.
    const unflagged = makeInput({ end: DAY, days: 35, status });
    expect(freshnessCheck.run(unflagged, opts()), dump(unflagged)).toEqual([]);
  });
});

describe('freshness: restated days and duplicate rows', () => {
  /** Status rows where `restated` was rolled up again (with `before` events at first) a minute before DAY's own rollup. */
  function restatedInput(end: string, restated: string, before: number, events = 10_000): CheckInput {
    const days = daysEnding(end, 35);
    const status = statusRows(days, (day) =>
      day === restated ? { events, previousEvents: before, rolledUpAt: new Date(dayEnd(DAY, 'UTC').getTime() + 2 * 3_600_000 - 60_000).toISOString() } : undefined,
    );
    return makeInput({ end, days: 35, status });
  }

  it('reports a past day whose event count changed at its latest rollup, once', () => {
    const restated = addDays(DAY, -3);
    const i = restatedInput(DAY, restated, 9_000);
    const findings = freshnessCheck.run(i, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.severity, f.subject.name]), dump(i)).toEqual([
      ['restated', 'web', 'note', restated],
      ['restated', 'android', 'note', restated],
    ]);
    const after = i.status.find((row) => row.day === restated && row.platform === 'web')!.events;
    expect(findings[0]!.message).toBe(
      `late rows restated ${restated} on web: 9,000 events at the first rollup, ${after.toLocaleString('en-US')} now (+${((100 * (after - 9_000)) / 9_000).toFixed(1)}%); the day was rolled up again`,
    );
    expect(findings[0]!.seriesKey).toBe(`freshness:restated:web:${restated}`);
    expect(freshnessCheck.gate!(i, opts())).toEqual({ ready: true });
    // The next day was rolled up after the restatement: it does not report it again.
    expect(freshnessCheck.run(restatedInput(addDays(DAY, 1), restated, 9_000), opts())).toEqual([]);
  });

  it('ignores restatements smaller than min_restated_change', () => {
    const i = restatedInput(DAY, addDays(DAY, -3), 9_950);
    expect(freshnessCheck.run(i, opts()), dump(i)).toEqual([]);
  });

  function perPersonInput(jumping: string[]): CheckInput {
    const perPerson = (event: string) => (day: string) => (day === DAY && jumping.includes(event) ? 3 : 1.5);
    return makeInput({
      end: DAY,
      series: ['screen_shown', 'pass_purchase_result'].map((event) => ({ platform: 'android', event, people: usual(800), perPerson: perPerson(event) })),
    });
  }

  it('reports rows loaded twice when most watched events of a platform double per person', () => {
    const i = perPersonInput(['screen_shown', 'pass_purchase_result']);
    const findings = freshnessCheck.run(i, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.severity]), describeInput(i)).toEqual([['duplicates', 'android', 'warn']]);
    expect(findings[0]!.observed, describeInput(i)).toBeCloseTo(2, 1);
    expect(findings[0]!.message).toContain('on 2 of 2 watched events');
  });

  it('leaves one event sent twice to the volume check', () => {
    const i = perPersonInput(['pass_purchase_result']);
    expect(freshnessCheck.run(i, opts()), describeInput(i)).toEqual([]);
    expect(volumeCheck.run(i, withPlatforms(volumeCheck.options.parse({}))).map((f) => [f.check, f.kind])).toEqual([['volume', 'events_per_person']]);
  });
});

describe('freshness: rows plumbline could not use', () => {
  // The 1% share and the floor of 20 rows are the check's defaults (common practice, not from a source).
  /** The judged day of web with `bad` rows by reason; 10,000 events otherwise. */
  function badInput(bad: Record<string, number>): CheckInput {
    const i = input(() => undefined);
    const status = i.status.map((row) => (row.day === DAY && row.platform === 'web' ? { ...row, badRows: bad } : row));
    return { ...i, status };
  }

  it('reports a platform whose bad rows exceed max_bad_row_share of its rows, without holding the day back', () => {
    // 150 set aside (not in events) and 60 repaired: 210 of events + 150 rows.
    const i = badInput({ no_event_name: 150, reserved_version: 60, long_text: 0 });
    const events = i.status.find((row) => row.day === DAY && row.platform === 'web')!.events;
    const findings = freshnessCheck.run(i, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.severity]), dump(i)).toEqual([['bad_rows', 'web', 'warn']]);
    expect(findings[0]!.observed).toBeCloseTo(210 / (events + 150), 10);
    expect(findings[0]!.message).toBe(
      `${((100 * 210) / (events + 150)).toFixed(1)}% of the rows from web on ${DAY} could not be used as sent (210 of ${(events + 150).toLocaleString('en-US')}: 150 no event name, 60 reserved version); the day was judged on the rest`,
    );
    expect(findings[0]!.seriesKey).toBe('freshness:bad_rows:web');
    expect(freshnessCheck.gate!(i, opts())).toEqual({ ready: true });
  });

  it('stays quiet at or under the share, under the floor, and with the share raised', () => {
    expect(freshnessCheck.run(badInput({ long_text: 50 }), opts())).toEqual([]);
    expect(freshnessCheck.run(badInput({ long_text: 19 }), opts({ max_bad_row_share: 0.001 }))).toEqual([]);
    expect(freshnessCheck.run(badInput({ long_text: 500 }), opts({ max_bad_row_share: 0.1 }))).toEqual([]);
    expect(freshnessCheck.run(badInput({ long_text: 500 }), opts({}, { web: { bad_rows_severity: 'note' } })).map((f) => f.severity)).toEqual(['note']);
  });
});

describe('freshness: row limits', () => {
  it('notes a platform whose day reached a row limit, with what it saw and kept', () => {
    const i = input(() => undefined);
    const overLimits = { versions: { seen: 812, kept: 500 }, param_keys: { seen: 250, kept: 200 } };
    const status = i.status.map((row) => (row.day === DAY && row.platform === 'android' ? { ...row, overLimits } : row));
    const findings = freshnessCheck.run({ ...i, status }, opts());
    expect(findings.map((f) => [f.kind, f.platform, f.severity])).toEqual([['row_limits', 'android', 'note']]);
    expect(findings[0]!.message).toBe(
      `android sent more distinct values on ${DAY} than plumbline keeps (812 versions, 500 kept; 250 parameter keys of an event, 200 kept): those with the fewest events were left out of the rollup`,
    );
    expect(findings[0]!.observed).toBeCloseTo(812 / 500, 10);
    expect(freshnessCheck.run({ ...i, status: i.status.map((row) => ({ ...row, overLimits: {} })) }, opts())).toEqual([]);
  });
});

describe('freshness through judgeDay', () => {
  it('keeps the other checks off a held-back day and applies mutes to its findings', () => {
    const i = input(() => ({ stopAt: '14:00' }));
    // A volume series that the partial day would show as a drop.
    const withSeries = makeInput({ end: DAY, days: 35, status: i.status, series: [{ platform: 'web', step: 1, people: (day, n) => (day === DAY ? 300 : usual(1000)(day, n)) }] });
    const config = flowConfig([volumeCheck, freshnessCheck], { mutes: [{ check: 'freshness', platform: 'android', until: '2026-12-31', reason: 'collector migration' }] });
    const judgement = judgeDay(withSeries, config, [volumeCheck, freshnessCheck]);
    expect(judgement.verdict, dump(withSeries)).toBe('not_ready');
    expect(judgement.reason).toContain('stopped at 14:00 on web');
    expect(judgement.findings.map((f) => [f.check, f.platform, f.muted])).toEqual([
      ['freshness', 'web', undefined],
      ['freshness', 'android', 'collector migration'],
    ]);
  });
});
