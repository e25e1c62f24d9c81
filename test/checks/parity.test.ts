/**
 * The `parity` check on plain funnel rows: one platform departing from the
 * others (hit, near miss, floor), a move on every platform at once (quiet),
 * absent steps and events, mutes, calendar days, per-platform overrides and
 * anomalous days kept out of the baseline.
 */
import { describe, expect, it } from 'vitest';
import { parityCheck } from '../../checks/parity/index.js';
import type { CheckInput, Day, Finding, FlowDefinition } from '../../checks/types.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import { TODAY, checkInput, daysUntil, explain, flowConfig, funnelHistory, optionsOf, passFlow, seeded, type FunnelSpec } from './fixtures-schema-parity.js';

const DAYS = daysUntil(TODAY, 40);
const LAST = DAYS.length - 1;
/** Usual entrants and continuation rates (intro->zone, zone->rider, rider->done) per platform, as in the demo. */
const USUAL: Record<string, FunnelSpec> = {
  web: { entrants: 1000, rates: [0.78, 0.84, 0.66] },
  android: { entrants: 1400, rates: [0.81, 0.85, 0.67] },
  ios: { entrants: 900, rates: [0.82, 0.87, 0.7] },
};

type Change = (platform: string, day: Day, i: number, usual: FunnelSpec) => FunnelSpec | undefined;

/**
 * Days of the usual funnels with day-to-day noise: a traffic level shared by
 * all platforms (weekday-like swings) and each platform's own 3% on traffic
 * and 1% on rates; `change` edits any platform-day.
 */
function funnels(change: Change = (_p, _d, _i, usual) => usual, flow: FlowDefinition = passFlow()) {
  const random = seeded(11);
  const shared = DAYS.map(() => 0.7 + 0.6 * random());
  const own = new Map(flow.platforms.map((p) => [p, DAYS.map(() => ({ traffic: 0.97 + 0.06 * random(), rates: [0, 1, 2].map(() => 0.99 + 0.02 * random()) }))]));
  return funnelHistory(flow, DAYS, (platform, day, i) => {
    const noise = own.get(platform)![i]!;
    const usual = USUAL[platform]!;
    const noisy = { entrants: Math.round(usual.entrants * shared[i]! * noise.traffic), rates: usual.rates.map((rate, k) => rate * noise.rates[k]!) };
    return change(platform, day, i, noisy);
  });
}

/** Scales one platform's rate of one transition (1 = intro->zone, 2 = zone->rider, 3 = rider->done) on the days `when` accepts. */
const scaleRate = (platform: string, transition: number, factor: number, when: (i: number) => boolean = (i) => i === LAST): Change => (p, _d, i, usual) =>
  p === platform && when(i) ? { ...usual, rates: usual.rates.map((rate, k) => (k === transition - 1 ? rate * factor : rate)) } : usual;

function run(input: CheckInput, options: Record<string, unknown> = {}): Finding[] {
  return parityCheck.run(input, optionsOf(parityCheck, options));
}

const summary = (findings: Finding[]) => findings.map((f) => `${f.kind} ${f.platform} ${f.subject.name} ${f.direction} ${f.severity}`);

describe('parity: one platform against the others', () => {
  it('reports android when its zone->rider conversion leaves web and ios behind', () => {
    const input = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.5)));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['conversion android rider down warn']);
    const [finding] = findings;
    expect(finding!.seriesKey).toBe('parity:conversion:zone>rider:android:*');
    expect(finding!.version).toBeNull();
    expect(finding!.score).toBeLessThan(-4);
    expect(finding!.observed).toBeCloseTo(0.425, 1);
    expect(finding!.expected.center).toBeCloseTo(0.85, 1);
    expect(finding!.message).toMatch(/^android zone→rider conversion diverged from web\/ios: 4\d\.\d% vs 8\d\.\d% expected from their move \(.+\), -5\d% against its usual ratio to them$/);
    expect(finding!.excerpt).toHaveLength(28);
    expect(finding!.excerpt.at(-1)).toMatchObject({ day: TODAY, flagged: true });
  });

  it('stays quiet when every platform moves at once (a holiday, a decline on all platforms)', () => {
    const everyone: Change = (_p, _d, i, usual) => (i === LAST ? { entrants: Math.round(usual.entrants * 0.45), rates: usual.rates.map((rate, k) => (k === 1 ? rate * 0.6 : rate)) } : usual);
    const input = checkInput(passFlow(), DAYS, funnels(everyone));
    expect(summary(run(input)), explain(input)).toEqual([]);
  });

  it('reports a change of the ratio beyond the tolerance, not one inside it', () => {
    // -10% is well beyond the noise (robust z far over 4) but inside the 15% tolerance; -20% is beyond both.
    const inside = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.9)));
    expect(summary(run(inside)), explain(inside)).toEqual([]);
    expect(summary(run(inside, { tolerance: '5%' }))).toEqual(['conversion android rider down warn']);
    const beyond = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.8)));
    expect(summary(run(beyond)), explain(beyond)).toEqual(['conversion android rider down warn']);
  });

  it('leaves a platform below the people floor out', () => {
    const input = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.5)));
    // android has about 1,100 people at zone_picker: a floor of 5,000 leaves it (and everyone else) out.
    expect(summary(run(input, { min_people: 5000 })), explain(input)).toEqual([]);
    expect(summary(run(input, { per_platform: { android: { min_people: 5000 } } }))).toEqual([]);
  });

  it("reports a platform's share of entrants when only it loses them", () => {
    const lost: Change = (p, _d, i, usual) => (p === 'ios' && i === LAST ? { ...usual, entrants: Math.round(usual.entrants * 0.5) } : usual);
    const input = checkInput(passFlow(), DAYS, funnels(lost));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['share ios monthly_pass down warn']);
    expect(findings[0]!.metric).toBe('entrants');
  });

  it('with two platforms, blames the one that moved against its own habit', () => {
    const flow = passFlow({ platforms: ['web', 'android'] });
    const input = checkInput(flow, DAYS, funnels(scaleRate('web', 3, 0.4), flow));
    expect(summary(run(input)), explain(input)).toEqual(['conversion web done down warn']);
  });
});

describe('parity: absent steps and events', () => {
  it('reports a step one platform stopped sending, instead of its conversion', () => {
    const noRider: Change = (p, _d, i, usual) => {
      if (p !== 'web' || i !== LAST) return usual;
      const zone = Math.round(usual.entrants * usual.rates[0]!);
      const rider = Math.round(zone * usual.rates[1]!);
      return { entrants: usual.entrants, rates: [usual.rates[0]!, 0, 0], stepPeople: [usual.entrants, zone, 0, Math.round(rider * usual.rates[2]!)] };
    };
    const input = checkInput(passFlow(), DAYS, funnels(noRider));
    const findings = run(input);
    expect(summary(findings), explain(input)).toEqual(['absent_step web rider down warn']);
    expect(findings[0]!.message).toMatch(/^web stopped sending the rider step \(screen_shown\) while android\/ios still do: 0 people, usually [\d,.]+$/);
    expect(findings[0]!.score).toBe(-1);
  });

  it('reports an event one platform stopped sending, and not each of its steps', () => {
    const noResult: Change = (p, _d, i, usual) => (p === 'android' && i === LAST ? { ...usual, rates: [usual.rates[0]!, usual.rates[1]!, 0] } : usual);
    const input = checkInput(passFlow(), DAYS, funnels(noResult));
    expect(summary(run(input)), explain(input)).toEqual(['absent_event android pass_purchase_result down warn']);
  });
});

describe('parity: mutes, calendar, overrides, anomalous days', () => {
  it('is muted through judgeDay by a mute on its platform, and only there', () => {
    const input = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.5)));
    const mute = { check: 'parity', platform: 'android', until: '2026-12-15', reason: 'android funnel rebuilt in 7.5' };
    expect(judgeDay(input, flowConfig(parityCheck, {}, [mute]), [parityCheck]).findings.map((f) => f.muted)).toEqual(['android funnel rebuilt in 7.5']);
    expect(judgeDay(input, flowConfig(parityCheck, {}, [{ ...mute, platform: 'web' }]), [parityCheck]).findings.map((f) => f.muted)).toEqual([undefined]);
  });

  it('on a declared low day keeps a platform that drops as a note with the calendar label', () => {
    const calendar = [{ day: TODAY, note: 'Thanksgiving', expect: 'low' as const }];
    const input = checkInput(passFlow(), DAYS, { ...funnels(scaleRate('android', 2, 0.5)), calendar });
    expect(run(input).map((f) => [f.kind, f.platform, f.severity, f.calendar]), explain(input)).toEqual([['conversion', 'android', 'note', 'Thanksgiving']]);
    const high = checkInput(passFlow(), DAYS, { ...funnels(scaleRate('android', 2, 0.5)), calendar: [{ ...calendar[0]!, expect: 'high' as const }] });
    expect(run(high).map((f) => [f.severity, f.calendar])).toEqual([['warn', 'Thanksgiving']]);
  });

  it('applies per-platform overrides', () => {
    const input = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.5)));
    expect(summary(run(input, { per_platform: { android: { tolerance: '60%' } } })), explain(input)).toEqual([]);
    expect(summary(run(input, { per_platform: { ios: { tolerance: '60%' } } }))).toEqual(['conversion android rider down warn']);
  });

  it('keeps days already judged anomalous out of the baseline, so a lasting divergence stays reported', () => {
    const since = LAST - 20;
    const input = checkInput(passFlow(), DAYS, funnels(scaleRate('android', 2, 0.5, (i) => i >= since)));
    expect(summary(run(input)), explain(input)).toEqual([]);
    const key = 'parity:conversion:zone>rider:android:*';
    const excluded = checkInput(passFlow(), DAYS, { ...funnels(scaleRate('android', 2, 0.5, (i) => i >= since)), anomalous: { [key]: DAYS.slice(since, LAST) } });
    const findings = run(excluded);
    expect(summary(findings), explain(excluded)).toEqual(['conversion android rider down warn']);
    expect(findings[0]!.since).toBe(DAYS[since]);
  });

  it('has documented defaults', () => {
    expect(parityCheck.options.parse({})).toEqual({ severity: 'warn', tolerance: 0.15, min_people: 50, baseline_days: 28, min_score: 4 });
  });
});
