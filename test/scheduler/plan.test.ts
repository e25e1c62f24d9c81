/**
 * The pure core of the scheduler: which business day a pass is for, and which
 * days of the catch-up window are due. Instants are UTC; America/New_York is
 * UTC-5 in winter and UTC-4 in summer, with the 2026 changes at 02:00 local on
 * 2026-03-08 and 2026-11-01 (IANA tz database, US rules of the Energy Policy
 * Act of 2005).
 */
import { describe, expect, it } from 'vitest';
import { latestSettledDay, localDay, planPass, type StoredVerdict } from '../../service/scheduler/plan.js';

const NY = 'America/New_York';
const TWO_HOURS = 7200;

describe('localDay', () => {
  it('reads the calendar day in the business timezone, not in UTC', () => {
    expect(localDay(new Date('2026-12-01T03:00:00Z'), NY)).toBe('2026-11-30'); // 22:00 EST
    expect(localDay(new Date('2026-12-01T05:00:00Z'), NY)).toBe('2026-12-01'); // 00:00 EST
    expect(localDay(new Date('2026-11-30T15:30:00Z'), 'Asia/Tokyo')).toBe('2026-12-01'); // 00:30 JST
  });
});

describe('latestSettledDay', () => {
  it('is yesterday once the settle time has passed since local midnight, the day before until then', () => {
    expect(latestSettledDay(new Date('2026-12-01T06:59:59Z'), NY, TWO_HOURS)).toBe('2026-11-29'); // 01:59:59 EST
    expect(latestSettledDay(new Date('2026-12-01T07:00:00Z'), NY, TWO_HOURS)).toBe('2026-11-30'); // 02:00 EST
    expect(latestSettledDay(new Date('2026-12-01T11:30:00Z'), NY, TWO_HOURS)).toBe('2026-11-30'); // the 06:30 daily run
  });

  it('counts the settle time in real hours on the fall-back night (2026-11-01 has 25 hours)', () => {
    // 2026-10-31 ends at 04:00Z (midnight EDT). Two real hours later it is 06:00Z, which the
    // wall clock shows as 01:00 EST, after the repeated hour.
    expect(latestSettledDay(new Date('2026-11-01T05:30:00Z'), NY, TWO_HOURS)).toBe('2026-10-30'); // 01:30 EDT
    expect(latestSettledDay(new Date('2026-11-01T06:00:00Z'), NY, TWO_HOURS)).toBe('2026-10-31'); // 01:00 EST
  });

  it('counts the settle time in real hours on the spring-forward night (2026-03-08 has 23 hours)', () => {
    // 2026-03-07 ends at 05:00Z (midnight EST); two real hours later the wall clock shows 03:00 EDT.
    expect(latestSettledDay(new Date('2026-03-08T06:59:00Z'), NY, TWO_HOURS)).toBe('2026-03-06'); // 01:59 EST
    expect(latestSettledDay(new Date('2026-03-08T07:00:00Z'), NY, TWO_HOURS)).toBe('2026-03-07'); // 03:00 EDT
  });
});

describe('planPass', () => {
  const now = new Date('2026-12-01T11:30:00Z'); // 06:30 EST: the newest settled day is 2026-11-30
  const flows = ['monthly_pass', 'account_signup'];
  const judged = (day: string, flow = 'monthly_pass'): StoredVerdict => ({ flow, day, verdict: 'judged', stale: true });
  const both = (day: string) => flows.map((flow) => judged(day, flow));
  const plan = (verdicts: StoredVerdict[], extra: { catchUpDays?: number; lastJudged?: string | null; flows?: string[] } = {}) =>
    planPass({
      now,
      timezone: NY,
      settleSeconds: TWO_HOURS,
      catchUpDays: extra.catchUpDays ?? 7,
      flows: extra.flows ?? flows,
      verdicts,
      lastJudged: extra.lastJudged ?? null,
    });

  it('runs last night’s day plus the missed days of the window, oldest first', () => {
    const result = plan([...both('2026-11-25'), ...both('2026-11-26'), ...both('2026-11-27')], { lastJudged: '2026-11-27' });
    expect(result.latest).toBe('2026-11-30');
    expect(result.windowStart).toBe('2026-11-23');
    expect(result.due).toEqual(['2026-11-23', '2026-11-24', '2026-11-28', '2026-11-29', '2026-11-30']);
    expect(result.leftBehind).toBeUndefined();
  });

  it('has nothing to do when every flow of every day of the window is judged', () => {
    const verdicts = ['23', '24', '25', '26', '27', '28', '29', '30'].flatMap((d) => both(`2026-11-${d}`));
    expect(plan(verdicts, { lastJudged: '2026-11-30' }).due).toEqual([]);
  });

  it('bounds the catch-up by catch_up_days and names the never-judged days left behind', () => {
    const result = plan([], { lastJudged: '2026-11-10', catchUpDays: 3 });
    expect(result.due).toEqual(['2026-11-27', '2026-11-28', '2026-11-29', '2026-11-30']);
    expect(result.leftBehind).toEqual({ from: '2026-11-11', to: '2026-11-26' });
  });

  it('with catch_up_days 0 runs only the newest settled day', () => {
    expect(plan([], { catchUpDays: 0 }).due).toEqual(['2026-11-30']);
  });

  it('tries a not_ready day again once its verdict is older than the recheck interval, not before', () => {
    const window = ['23', '24', '25', '26', '27', '28', '29', '30'].flatMap((d) => both(`2026-11-${d}`));
    const notReady = (day: string, stale: boolean): StoredVerdict => ({ flow: 'account_signup', day, verdict: 'not_ready', stale });
    const verdicts = window.map((v) =>
      v.flow === 'account_signup' && v.day === '2026-11-28' ? notReady(v.day, true) : v.flow === 'account_signup' && v.day === '2026-11-29' ? notReady(v.day, false) : v,
    );
    expect(plan(verdicts, { lastJudged: '2026-11-30' }).due).toEqual(['2026-11-28']);
  });

  it('runs a day again when a flow added since has no verdict for it', () => {
    const window = ['23', '24', '25', '26', '27', '28', '29', '30'].map((d) => judged(`2026-11-${d}`));
    expect(plan(window, { flows: ['monthly_pass'] }).due).toEqual([]);
    expect(plan(window, { flows: ['monthly_pass', 'night_rider'] }).due).toHaveLength(8);
  });

  it('has nothing to do without flows', () => {
    expect(plan([], { flows: [] }).due).toEqual([]);
  });
});
