/**
 * The `schema` check on plain rollup rows: contract rules, drift against
 * recent days, localisation to a release, floors, mutes, calendar days,
 * per-platform overrides and anomalous days kept out of references.
 */
import { describe, expect, it } from 'vitest';
import { schemaCheck } from '../../checks/schema/index.js';
import type { CheckInput, Day, Finding } from '../../checks/types.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import { TODAY, checkInput, daysUntil, explain, flowConfig, merge, optionsOf, passFlow, profileHistory, seeded, type KeySpec } from './fixtures-schema-parity.js';

const DAYS = daysUntil(TODAY, 40);
const LAST = DAYS.length - 1;

const zoneKeys = (overrides: Record<string, KeySpec> = {}): Record<string, KeySpec> => ({
  fare_zone: { values: { A: 0.45, AB: 0.4, ABC: 0.15 } },
  rider_type: { values: { adult: 0.7, student: 0.18, senior: 0.12 } },
  ...overrides,
});
const renamedKeys = (): Record<string, KeySpec> => ({
  zone: { values: { A: 0.45, AB: 0.4, ABC: 0.15 } },
  rider_type: { values: { adult: 0.7, student: 0.18, senior: 0.12 } },
});
const referrerKeys = (overrides: Record<string, KeySpec> = {}): Record<string, KeySpec> => ({
  view: { values: { pass_intro: 0.3, zone_picker: 0.25, rider_details: 0.22, pay_review: 0.23 } },
  referrer: { share: 0.3, values: { home: 0.5, menu: 0.3, notification: 0.2 } },
  ...overrides,
});

/** A count around `mean`, varying by up to 10% from day to day. */
function around(mean: number, seed: number): (day: Day, i: number) => number {
  const random = seeded(seed);
  const draws = DAYS.map(() => random());
  return (_day, i) => Math.round(mean * (0.9 + 0.2 * draws[i]!));
}

/** iOS zone_selected: 5.1.0 carries most traffic, 5.0.2 a little; `today` replaces the judged day's versions. */
function iosZone(today?: Record<string, { total: number; keys: Record<string, KeySpec> }>) {
  const big = around(600, 1);
  const small = around(40, 2);
  const usual = { '5.1.0': (d: Day, i: number) => ({ total: big(d, i), keys: zoneKeys() }), '5.0.2': (d: Day, i: number) => ({ total: small(d, i), keys: zoneKeys() }) };
  const past = profileHistory(DAYS.slice(0, LAST), 'zone_selected', 'ios', usual);
  const last = today ?? { '5.1.0': { total: 600, keys: zoneKeys() }, '5.0.2': { total: 40, keys: zoneKeys() } };
  const now = profileHistory([TODAY], 'zone_selected', 'ios', Object.fromEntries(Object.entries(last).map(([version, cell]) => [version, () => cell])));
  return merge(past, now);
}

function run(input: CheckInput, options: Record<string, unknown> = {}): Finding[] {
  return schemaCheck.run(input, optionsOf(schemaCheck, options));
}

const summary = (findings: Finding[]) => findings.map((f) => `${f.kind} ${f.platform} ${f.version} ${f.subject.name} ${f.severity}`);

describe('schema: contract and renames', () => {
  it('names the release that renamed a required key ("ios 5.2.0 sends `zone` instead of `fare_zone`")', () => {
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 40, keys: renamedKeys() } }));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['renamed ios 5.2.0 zone_selected.fare_zone warn']);
    const [finding] = findings;
    expect(finding!.message).toBe('ios 5.2.0 sends `zone` instead of `fare_zone` in zone_selected: `zone` in 40 of 40 events, `fare_zone` in 0');
    expect(finding!.seriesKey).toBe('schema:presence:zone_selected.fare_zone:ios:5.2.0');
    expect(finding!.since).toBe(TODAY);
    expect(finding!.evidence!.new_key).toBe('zone');
    expect(finding!.excerpt).toHaveLength(28);
    expect(finding!.excerpt.at(-1)).toMatchObject({ day: TODAY, value: 0, flagged: true });
  });

  it('does not call an unrelated new key a rename: its values differ from the lost key\'s', () => {
    const unrelated = { theme: { values: { dark: 0.6, light: 0.4 } }, rider_type: { values: { adult: 0.7, student: 0.18, senior: 0.12 } } };
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 40, keys: unrelated } }));
    expect(summary(run(input)), explain(input)).toEqual(['missing_required ios 5.2.0 zone_selected.fare_zone warn', 'undeclared_key ios 5.2.0 zone_selected.theme note']);
  });

  it('keeps a clean rollout quiet: a new version that sends what the others send', () => {
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 500, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 90, keys: zoneKeys() } }));
    expect(summary(run(input)), explain(input)).toEqual([]);
  });

  it('reports a required key missing beyond the tolerance, and not just inside it', () => {
    // Wilson (1927) 95% lower bounds, by the formula of checks/stats/wilson.ts (computed by hand):
    // 24 of 2000 missing (1.2%) -> 0.0081, inside 1%; 40 of 2000 -> 0.0147, beyond 1%.
    const inside = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 2000, keys: zoneKeys({ fare_zone: { share: 0.988, values: { A: 0.45, AB: 0.4, ABC: 0.15 } } }) }, '5.0.2': { total: 40, keys: zoneKeys() } }));
    expect(summary(run(inside)), explain(inside)).toEqual([]);
    const beyond = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 2000, keys: zoneKeys({ fare_zone: { share: 0.98, values: { A: 0.45, AB: 0.4, ABC: 0.15 } } }) }, '5.0.2': { total: 40, keys: zoneKeys() } }));
    const findings = run(beyond);
    expect(summary(findings), explain(beyond)).toEqual(['missing_required ios 5.1.0 zone_selected.fare_zone warn']);
    expect(findings[0]!.observed).toBeCloseTo(0.02, 6);
    expect(findings[0]!.message).toBe('ios 5.1.0: 2.0% of zone_selected events (40 of 2,000) lack the required parameter `fare_zone`');
  });

  it('does not judge a version below the floor on its own, and its few events barely move the platform', () => {
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 2000, keys: zoneKeys() }, '5.0.2': { total: 20, keys: zoneKeys({ fare_zone: { share: 0 } }) } }));
    expect(summary(run(input)), explain(input)).toEqual([]);
    // The same version with min_events lowered to 20 is judged, and blamed alone.
    expect(summary(run(input, { min_events: 20 }))).toEqual(['missing_required ios 5.0.2 zone_selected.fare_zone warn']);
  });

  // Issue 13: on its first day a release had 21 of 216 events, under the floor, and its rename was the platform's.
  it('names a release below the floor when the platform\'s break is all in it: the symptom\'s share is the version\'s', () => {
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 21, keys: renamedKeys() } }));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['renamed ios 5.2.0 zone_selected.fare_zone warn']);
    expect(findings[0]!.message).toBe('ios 5.2.0 sends `zone` instead of `fare_zone` in zone_selected: `zone` in 21 of 21 events, `fare_zone` in 0');
    // Carried by two small versions (a release and a later one that kept the change), it is named by the one that
    // appeared first (5.0.2 is in the history, 5.2.0 is new today).
    const two = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 21, keys: renamedKeys() }, '5.2.0': { total: 21, keys: renamedKeys() } }));
    const pooled = run(two);
    expect(summary(pooled), explain(two)).toEqual(['renamed ios 5.0.2 zone_selected.fare_zone warn']);
    expect(pooled[0]!.evidence!.versions).toBe('5.0.2, 5.2.0');
    // In every version at once, it is the platform's.
    const every = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: renamedKeys() }, '5.2.0': { total: 21, keys: renamedKeys() } }));
    expect(summary(run(every)), explain(every)).toEqual(['renamed ios null zone_selected.fare_zone warn']);
  });

  it('reports a change in every version at once as one platform finding (version null)', () => {
    const broken = zoneKeys({ fare_zone: { share: 0.5, values: { A: 0.45, AB: 0.4, ABC: 0.15 } } });
    const input = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 600, keys: broken }, '5.0.2': { total: 60, keys: broken } }));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['missing_required ios null zone_selected.fare_zone warn']);
    expect(findings[0]!.seriesKey).toBe('schema:presence:zone_selected.fare_zone:ios:*');
  });

  it('checks JSON types, integers, nulls, enums, ranges and undeclared keys', () => {
    const days = DAYS;
    const result = (keys: Record<string, KeySpec>) =>
      profileHistory(days, 'pass_purchase_result', 'android', { '7.3.0': (_d, i) => ({ total: 500, keys: i === LAST ? keys : { amount_cents: { type: 'number', minNumber: 4850, maxNumber: 16500 } } }) });
    const cases: Array<[string, Record<string, KeySpec>, string[]]> = [
      ['fractions in an integer', { amount_cents: { type: 'number', minNumber: 4850, maxNumber: 16500, fractional: 0.2 } }, ['wrong_type']],
      ['a string where a number belongs', { amount_cents: { type: 'string', values: { '9700': 1 } } }, ['wrong_type']],
      ['numbers above max', { amount_cents: { type: 'number', minNumber: 4850, maxNumber: 90000 } }, ['out_of_range']],
      ['nulls where not nullable', { amount_cents: { type: 'number', minNumber: 4850, maxNumber: 16500, nulls: 0.1 } }, ['unexpected_null']],
      ['a key the contract does not declare', { amount_cents: { type: 'number', minNumber: 4850, maxNumber: 16500 }, promo: { share: 0.5, values: { spring: 1 } } }, ['undeclared_key']],
    ];
    for (const [name, keys, kinds] of cases) {
      const input = checkInput(passFlow(), days, result(keys));
      expect(run(input).map((f) => f.kind), `${name}\n${explain(input)}`).toEqual(kinds);
    }
    const range = run(checkInput(passFlow(), days, result(cases[2]![1])))[0]!;
    expect(range.observed).toBe(90000);
    expect(range.score).toBeCloseTo((90000 - 50000) / 50000, 9); // distance beyond max in units of the declared range
    expect(range.message).toBe('android sends `amount_cents` of pass_purchase_result from 4850 to 90000, outside the contract range 0 to 50000');
    expect(run(checkInput(passFlow(), days, result(cases[0]![1])))[0]!.message).toContain('as number with a fraction; the contract says integer');
    expect(run(checkInput(passFlow(), days, result(cases[4]![1])))[0]!.severity).toBe('note');
  });

  it('finds values outside the enum, with a lower bound when the profile lists only some, and cuts long values', () => {
    const longValue = 'Z'.repeat(80);
    const outside = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 600, keys: zoneKeys({ fare_zone: { values: { A: 0.5, AB: 0.4, [longValue]: 0.1 } } }) }, '5.0.2': { total: 40, keys: zoneKeys() } }));
    const [finding] = run(outside);
    expect(finding?.kind, explain(outside)).toBe('outside_enum');
    expect(finding!.message).toContain(`${'Z'.repeat(23)}…`);
    expect(finding!.message).not.toContain(longValue);
    // Listed A, AB, ABC but 9 distinct values: at least 6 events carry values the enum does not allow.
    const partial = checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 100, keys: zoneKeys({ fare_zone: { values: { A: 0.5, AB: 0.3, ABC: 0.14 }, distinct: 9 } }) }, '5.0.2': { total: 40, keys: zoneKeys() } }));
    const [lowerBound] = run(partial);
    expect(lowerBound?.kind, explain(partial)).toBe('outside_enum');
    expect(lowerBound!.evidence!.events).toBe(6);
    expect(lowerBound!.message).toContain('at least 6 more not listed by the profile');
  });
});

describe('schema: drift against recent days', () => {
  /** web screen_shown (no contract): one version, `today` replaces the judged day's keys. */
  const webViews = (today: Record<string, KeySpec>, past: (i: number) => Record<string, KeySpec> = () => referrerKeys()) => {
    const total = around(3000, 3);
    return profileHistory(DAYS, 'screen_shown', 'web', { '': (d, i) => ({ total: total(d, i), keys: i === LAST ? today : past(i) }) });
  };

  it('reports a vanished key, a null-rate jump and a type change, and stays quiet on the usual mix', () => {
    const quiet = checkInput(passFlow(), DAYS, webViews(referrerKeys({ referrer: { share: 0.27, values: { home: 0.5, menu: 0.3, notification: 0.2 } } })));
    expect(summary(run(quiet)), explain(quiet)).toEqual([]);
    const cases: Array<[string, Record<string, KeySpec>, string]> = [
      ['vanished', referrerKeys({ referrer: { share: 0 } }), 'vanished_key web null screen_shown.referrer warn'],
      ['nulls', referrerKeys({ referrer: { share: 0.3, nulls: 0.4, values: { home: 0.5, menu: 0.3, notification: 0.2 } } }), 'null_rate web null screen_shown.referrer warn'],
      ['type', referrerKeys({ referrer: { share: 0.3, type: 'number', minNumber: 1, maxNumber: 3 } }), 'type_shift web null screen_shown.referrer warn'],
    ];
    for (const [name, keys, expected] of cases) {
      const input = checkInput(passFlow(), DAYS, webViews(keys));
      expect(summary(run(input)), `${name}\n${explain(input)}`).toEqual([expected]);
    }
    const vanished = run(checkInput(passFlow(), DAYS, webViews(cases[0]![1])))[0]!;
    expect(vanished.direction).toBe('down');
    expect(vanished.score).toBeLessThan(-3.29); // two-proportion z beyond the two-sided 0.001 critical value (normal quantile)
    expect(vanished.message).toMatch(/^web stopped sending `referrer` with screen_shown: in 0\.0% of [\d,]+ events, usually 30\.0% \(20\.0% to 40\.0%\)$/);
  });

  it('reports a new key once, on the day it first appears', () => {
    const first = checkInput(passFlow(), DAYS, webViews(referrerKeys({ session_tag: { share: 0.5, values: { x: 1 } } })));
    expect(summary(run(first)), explain(first)).toEqual(['new_key web null screen_shown.session_tag note']);
    const nextDays = [...DAYS.slice(1), '2026-11-11'];
    const next = checkInput(passFlow(), nextDays, profileHistory(nextDays, 'screen_shown', 'web', { '': (_d, i) => ({ total: 3000, keys: i >= LAST - 1 ? referrerKeys({ session_tag: { share: 0.5, values: { x: 1 } } }) : referrerKeys() }) }));
    expect(summary(run(next)), explain(next)).toEqual([]);
    expect(run(first, { unknown_params: 'off' })).toEqual([]);
    // A stray event carrying the key yesterday does not make it known.
    const stray = checkInput(passFlow(), nextDays, profileHistory(nextDays, 'screen_shown', 'web', { '': (_d, i) => ({ total: 3000, keys: i === LAST ? referrerKeys({ session_tag: { share: 0.5, values: { x: 1 } } }) : i === LAST - 1 ? referrerKeys({ session_tag: { share: 0.0004, values: { x: 1 } } }) : referrerKeys() }) }));
    expect(summary(run(stray)), explain(stray)).toEqual(['new_key web null screen_shown.session_tag note']);
  });

  // Issue 13: the values of a key a release had just renamed came back as "new values" notes on the next days.
  it('leaves the values of a key seen for only a few days to its arrival: not news yet', () => {
    const { view } = referrerKeys();
    const source = (values: Record<string, number>) => ({ view: view!, source: { share: 0.3, values } });
    // `referrer` became `source` three days before the judged day, which brings a value `source` had not shown.
    const young = (i: number) => (i >= LAST - 3 ? source({ home: 0.5, menu: 0.3, notification: 0.2 }) : referrerKeys());
    const input = checkInput(passFlow(), DAYS, webViews(source({ home: 0.4, menu: 0.3, notification: 0.1, push: 0.2 }), young));
    expect(run(input).filter((f) => f.subject.name === 'screen_shown.source'), explain(input)).toEqual([]);
    // Sent for three weeks, the key's new value is news.
    const settled = (i: number) => (i >= LAST - 21 ? source({ home: 0.5, menu: 0.3, notification: 0.2 }) : referrerKeys());
    const later = checkInput(passFlow(), DAYS, webViews(source({ home: 0.4, menu: 0.3, notification: 0.1, push: 0.2 }), settled));
    expect(summary(run(later).filter((f) => f.subject.name === 'screen_shown.source')), explain(later)).toEqual(['new_value web null screen_shown.source note']);
  });

  it('takes the first sight of an event as its baseline: its keys and values are not news', () => {
    // The platform sends screen_shown for the first time today (a backfill's first day, a platform added later).
    const first = checkInput(passFlow(), DAYS, profileHistory([TODAY], 'screen_shown', 'web', { '': () => ({ total: 3000, keys: referrerKeys({ session_tag: { share: 0.5, values: { x: 1 } } }) }) }));
    expect(summary(run(first)), explain(first)).toEqual([]);
  });

  it('judges only the declared contract while the flow is learning its history', () => {
    const learning = { days: 12, needed: 28 };
    const newKey = checkInput(passFlow(), DAYS, webViews(referrerKeys({ session_tag: { share: 0.5, values: { x: 1 } } })));
    expect(summary(run({ ...newKey, learning })), explain(newKey)).toEqual([]);
    const vanished = checkInput(passFlow(), DAYS, webViews(referrerKeys({ referrer: { share: 0 } })));
    expect(summary(run({ ...vanished, learning }))).toEqual([]);
    // A contract needs no history: a broken rule is reported from the first day.
    const wrongType = checkInput(passFlow(), DAYS, profileHistory([TODAY], 'zone_selected', 'web', { '': () => ({ total: 500, keys: zoneKeys({ fare_zone: { type: 'number', minNumber: 1, maxNumber: 3 } }) }) }));
    expect(summary(run({ ...wrongType, learning })).map((line) => line.split(' ')[0])).toContain('wrong_type');
  });

  it('reports new values of a low-cardinality key without an enum (an enum turns them into contract breaks)', () => {
    const input = checkInput(passFlow(), DAYS, webViews(referrerKeys({ referrer: { share: 0.3, values: { home: 0.4, menu: 0.3, notification: 0.1, push: 0.2 } } })));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['new_value web null screen_shown.referrer note']);
    expect(findings[0]!.message).toContain('push');
    // delivery.hide_values: the value is counted, never quoted.
    const hidden = run({ ...input, hideValues: true });
    expect(hidden[0]!.message).not.toContain('push');
    expect(hidden[0]!.message).toContain('1 value (hidden by configuration)');
  });

  it('names the release that stopped sending a value, and leaves step values to the step counts unless asked', () => {
    const total = around(1500, 4);
    const rows = (keys: Record<string, KeySpec>) =>
      merge(
        profileHistory(DAYS, 'screen_shown', 'android', { '7.3.0': (d, i) => ({ total: total(d, i), keys: referrerKeys() }) }),
        profileHistory([TODAY], 'screen_shown', 'android', { '7.4.0': () => ({ total: 400, keys }) }),
      );
    const noMenu = checkInput(passFlow(), DAYS, rows(referrerKeys({ referrer: { share: 0.3, values: { home: 0.7, notification: 0.3 } } })));
    const findings = run(noMenu);
    expect(summary(findings), explain(noMenu)).toEqual(['vanished_value android 7.4.0 screen_shown.referrer warn']);
    expect(findings[0]!.message).toBe('android 7.4.0 stopped sending `referrer` = menu with screen_shown: 0 of 120 events, about 36 expected');
    const noRider = checkInput(passFlow(), DAYS, rows(referrerKeys({ view: { values: { pass_intro: 0.4, zone_picker: 0.3, pay_review: 0.3 } } })));
    expect(summary(run(noRider)), explain(noRider)).toEqual([]);
    expect(summary(run(noRider, { step_values: 'note' }))).toEqual(['vanished_value android 7.4.0 screen_shown.view note']);
  });
});

describe('schema: mutes, calendar, overrides, anomalous days', () => {
  const renameInput = () =>
    checkInput(passFlow(), DAYS, iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 40, keys: renamedKeys() } }));

  it('is muted through judgeDay by a mute on its platform, and only there', () => {
    const mute = { check: 'schema', platform: 'ios', until: '2026-12-15', reason: 'zone rename known, fixed in 5.2.1' };
    const muted = judgeDay(renameInput(), flowConfig(schemaCheck, {}, [mute]), [schemaCheck]);
    expect(muted.findings.map((f) => [f.kind, f.muted])).toEqual([['renamed', 'zone rename known, fixed in 5.2.1']]);
    const elsewhere = judgeDay(renameInput(), flowConfig(schemaCheck, {}, [{ ...mute, platform: 'android' }]), [schemaCheck]);
    expect(elsewhere.findings.map((f) => [f.kind, f.muted])).toEqual([['renamed', undefined]]);
    const disabled = judgeDay(renameInput(), flowConfig(schemaCheck, { enabled: false }), [schemaCheck]);
    expect(disabled.findings).toEqual([]);
  });

  it('on a declared low day softens a dropping drift to a note, but not a broken rule or a rename', () => {
    const calendar = [{ day: TODAY, note: 'public holiday', expect: 'low' as const }];
    const total = around(3000, 5);
    const rows = merge(
      profileHistory(DAYS, 'screen_shown', 'web', { '': (d, i) => ({ total: total(d, i), keys: i === LAST ? referrerKeys({ referrer: { share: 0 } }) : referrerKeys() }) }),
      profileHistory(DAYS, 'zone_selected', 'web', { '': (_d, i) => ({ total: 800, keys: i === LAST ? zoneKeys({ fare_zone: { share: 0.5, values: { A: 0.45, AB: 0.4, ABC: 0.15 } } }) : zoneKeys() }) }),
      iosZone({ '5.1.0': { total: 560, keys: zoneKeys() }, '5.0.2': { total: 38, keys: zoneKeys() }, '5.2.0': { total: 40, keys: renamedKeys() } }),
    );
    const input = checkInput(passFlow(), DAYS, { ...rows, calendar });
    const findings = run(input);
    expect(findings.map((f) => [f.kind, f.direction, f.severity, f.calendar]), explain(input)).toEqual([
      ['vanished_key', 'down', 'note', 'public holiday'],
      ['renamed', 'down', 'warn', 'public holiday'],
      ['missing_required', 'none', 'warn', 'public holiday'],
    ]);
  });

  it('applies per-platform overrides', () => {
    const broken = zoneKeys({ fare_zone: { share: 0.7, values: { A: 0.45, AB: 0.4, ABC: 0.15 } } });
    const rows = (platform: string) => profileHistory(DAYS, 'zone_selected', platform, { v1: (_d, i) => ({ total: 700, keys: i === LAST ? broken : zoneKeys() }) });
    const input = checkInput(passFlow(), DAYS, merge(rows('android'), rows('ios')));
    expect(summary(run(input)), explain(input)).toEqual(['missing_required android null zone_selected.fare_zone warn', 'missing_required ios null zone_selected.fare_zone warn']);
    const overridden = run(input, { per_platform: { ios: { tolerance: '50%' } } });
    expect(summary(overridden)).toEqual(['missing_required android null zone_selected.fare_zone warn']);
  });

  it('keeps days already judged anomalous out of the reference, so a lasting break stays reported', () => {
    // referrer vanished 19 days ago: learnt from, those days would make 0% look usual.
    const gone = LAST - 19;
    const total = around(3000, 6);
    const rows = profileHistory(DAYS, 'screen_shown', 'web', { '': (d, i) => ({ total: total(d, i), keys: i >= gone ? referrerKeys({ referrer: { share: 0 } }) : referrerKeys() }) });
    const learnt = checkInput(passFlow(), DAYS, rows);
    expect(summary(run(learnt)), explain(learnt)).toEqual([]);
    const key = 'schema:presence:screen_shown.referrer:web:*';
    const excluded = checkInput(passFlow(), DAYS, { ...rows, anomalous: { [key]: DAYS.slice(gone, LAST) } });
    const findings = run(excluded);
    expect(summary(findings), explain(excluded)).toEqual(['vanished_key web null screen_shown.referrer warn']);
    expect(findings[0]!.since).toBe(DAYS[gone]);
    expect(findings[0]!.expected.center).toBeCloseTo(0.3, 2);
  });

  it('has documented defaults', () => {
    expect(schemaCheck.options.parse({})).toEqual({
      severity: 'warn',
      unknown_params: 'note',
      new_values: 'note',
      step_values: 'off',
      tolerance: 0.01,
      min_events: 30,
      min_change: 0.1,
      drift_days: 28,
    });
  });
});
