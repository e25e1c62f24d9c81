import { describe, expect, it } from 'vitest';
import { generalizedEsd } from '../../checks/stats/generalized-esd.js';
import { seasonalHybridEsd } from '../../checks/stats/hybrid-esd.js';
import type { OnlineJudgement } from '../../checks/stats/seasonal-detector.js';
import { judgeEachDay, judgeLatest } from '../../checks/stats/seasonal-detector.js';
import { normal, prng, readFixture } from './support.js';

interface Labels {
  windows: { name: string; from: string; to: string; required: boolean }[];
  usFederalHolidays: { dates: string[] };
}

// Real data: Numenta Anomaly Benchmark, realKnownCause/nyc_taxi.csv summed per day (MIT, see test/fixtures/nyc-taxi/README.md).
const rows = readFixture('nyc-taxi', 'nyc-taxi-daily.csv').trim().split('\n').slice(1).map((line) => line.split(','));
const dates = rows.map((r) => r[0]!);
const passengers = rows.map((r) => Number(r[1]));
// NAB labels/combined_windows.json for this series, and the US federal holidays in range (5 U.S.C. 6103, dates from the statute's rules, from memory).
const labels = JSON.parse(readFixture('nyc-taxi', 'labels.json')) as Labels;
const DAY = 86_400_000;

function inWindow(date: string): string | undefined {
  return labels.windows.find((w) => date >= w.from && date <= w.to)?.name;
}

function daysToHoliday(date: string): number {
  return Math.min(...labels.usFederalHolidays.dates.map((h) => Math.abs(Date.parse(h) - Date.parse(date)) / DAY));
}

/** Flagged days, per-window hits, day precision and event recall, printed for the record. */
function score(flagged: number[], title: string): { missing: string[]; farFromHolidays: string[] } {
  const hits = labels.windows.map((w) => ({ ...w, hit: flagged.some((i) => dates[i]! >= w.from && dates[i]! <= w.to) }));
  const inside = flagged.filter((i) => inWindow(dates[i]!) !== undefined);
  const outside = flagged.filter((i) => inWindow(dates[i]!) === undefined);
  const farFromHolidays = outside.filter((i) => daysToHoliday(dates[i]!) > 3).map((i) => dates[i]!);
  const precision = flagged.length === 0 ? 0 : inside.length / flagged.length;
  const recall = hits.filter((h) => h.hit).length / hits.length;
  console.log(
    [
      `${title}: ${flagged.length} days flagged`,
      ...flagged.map((i) => `  ${dates[i]} ${inWindow(dates[i]!) ?? (daysToHoliday(dates[i]!) <= 3 ? '(within 3 days of a federal holiday)' : '(outside the labelled windows)')}`),
      `  windows hit: ${hits.map((h) => `${h.name} ${h.hit ? 'yes' : 'no'}`).join(', ')}`,
      `  precision (flagged days inside a labelled window) ${precision.toFixed(2)}, recall (labelled events with a flagged day) ${recall.toFixed(2)}`,
      `  flagged outside the windows and more than 3 days from a federal holiday: ${farFromHolidays.length} ${farFromHolidays.join(' ')}`,
    ].join('\n'),
  );
  return { missing: hits.filter((h) => h.required && !h.hit).map((h) => h.name), farFromHolidays };
}

describe('seasonal detector on real data: NYC taxi passengers (NAB)', () => {
  it('online at default sensitivity: a flagged day in each required window, at most 3 unexplained flags', () => {
    const judgements = judgeEachDay(passengers);
    const flagged = judgements.filter((j) => j.anomalous);
    for (const j of flagged) {
      console.log(`  ${dates[j.index]} ${j.method} observed ${j.observed} expected ${j.expected.toFixed(0)} band ${j.low.toFixed(0)}..${j.high.toFixed(0)} score ${j.score.toFixed(2)} critical ${j.critical.toFixed(2)}`);
    }
    const { missing, farFromHolidays } = score(
      flagged.map((j) => j.index),
      'online (each day from its own past, flagged days kept out of later baselines)',
    );
    expect(missing, 'labelled windows with no flagged day').toEqual([]);
    expect(farFromHolidays.length, `unexplained flags: ${farFromHolidays.join(', ')}`).toBeLessThanOrEqual(3);
  });

  it('uses the weekday median before four weeks of history and STL after (the switch point)', () => {
    const methods = judgeEachDay(passengers).map((j) => j.method);
    expect(methods.slice(0, 14).every((m) => m === 'insufficient-history')).toBe(true);
    expect(methods.slice(14, 28).every((m) => m === 'weekday-median')).toBe(true);
    expect(methods.slice(28).every((m) => m === 'stl-esd')).toBe(true);
  });

  it('batch seasonal hybrid ESD over the whole series (the paper, with look-ahead) meets the same criteria', () => {
    const batch = seasonalHybridEsd(passengers, { period: 7 });
    const { missing, farFromHolidays } = score(batch.anomalies, 'batch S-H-ESD over the whole series');
    expect(missing).toEqual([]);
    expect(farFromHolidays.length).toBeLessThanOrEqual(3);
  });
});

describe('seasonal detector calibration (simulated; no published values)', () => {
  it('mean/sd ESD holds its nominal 5% on normal samples; the median/MAD variant does not (why S-ESD is the default)', () => {
    const rand = prng(2024);
    const rate = (n: number, robust: boolean): number => {
      let any = 0;
      const reps = 1500;
      for (let r = 0; r < reps; r++) {
        const x = Array.from({ length: n }, () => normal(rand));
        if (generalizedEsd(x, { maxOutliers: Math.floor(0.1 * n), robust }).outlierCount > 0) any++;
      }
      return any / reps;
    };
    const classic = rate(85, false);
    const robust = rate(85, true);
    console.log(`P(some outlier declared) in normal samples of 85 at alpha 0.05: mean/sd ${classic.toFixed(3)}, median/MAD ${robust.toFixed(3)}`);
    expect(classic).toBeGreaterThan(0.03);
    expect(classic).toBeLessThan(0.07);
    expect(robust).toBeGreaterThan(0.1);
  });

  it('raises few false alarms on clean weekly series with trend and noise (under 0.5% of days)', () => {
    const weekly = [0, 40, 55, 60, 58, 30, -120];
    let judged = 0;
    let flagged = 0;
    for (let seed = 1; seed <= 6; seed++) {
      const rand = prng(seed);
      const y = Array.from({ length: 250 }, (_, t) => 1000 + 0.5 * t + weekly[t % 7]! + 10 * normal(rand));
      const js = judgeEachDay(y);
      judged += js.filter((j) => j.method !== 'insufficient-history').length;
      flagged += js.filter((j) => j.anomalous).length;
    }
    console.log(`false alarms on clean synthetic series: ${flagged} of ${judged} days`);
    expect(flagged / judged).toBeLessThan(0.005);
  });

  it('flags a 10% drop on a series with 1-2% noise, with the band around the expected value', () => {
    const rand = prng(99);
    const weekly = [0, 40, 55, 60, 58, 30, -120];
    const y = Array.from({ length: 84 }, (_, t) => 1000 + weekly[t % 7]! + 15 * normal(rand));
    const expectedMonday = 1000 + weekly[84 % 7]!;
    const r = judgeLatest([...y, expectedMonday * 0.9]);
    expect(r.anomalous, JSON.stringify(r)).toBe(true);
    expect(r.direction).toBe('below');
    expect(r.observed).toBeLessThan(r.low);
    expect(Math.abs(r.expected - expectedMonday)).toBeLessThan(20);
    const fine = judgeLatest([...y, expectedMonday]);
    expect(fine.anomalous, JSON.stringify(fine)).toBe(false);
    expect(fine.low <= fine.observed && fine.observed <= fine.high).toBe(true);
  });
});

describe('seasonal detector edge cases', () => {
  const rand = prng(3);
  const base = Array.from({ length: 70 }, (_, t) => 200 + [0, 10, 12, 14, 11, -20, -30][t % 7]! + 4 * normal(rand));

  it('gives the example of its doc comment', () => {
    const profile = [55, 58, 59, 60, 57, 48, 45];
    const rates = Array.from({ length: 56 }, (_, t) => profile[t % 7]! + ((t * 7) % 5) * 0.4);
    const r = judgeLatest([...rates, 41]);
    expect(r.method).toBe('stl-esd');
    expect(r.anomalous).toBe(true);
    expect([r.expected, r.low, r.high].map((v) => Number(v.toFixed(1)))).toEqual([58.3, 49.1, 62.1]);
  });

  it('judges nothing with too little history, then switches at the documented point', () => {
    expect(judgeLatest(base.slice(0, 10)).method).toBe('insufficient-history');
    expect(judgeLatest(base.slice(0, 28)).method).toBe('weekday-median');
    expect(judgeLatest(base.slice(0, 29)).method).toBe('stl-esd');
    // Excluded days do not count as usable history.
    const excluded = new Array(29).fill(false);
    excluded[3] = true;
    expect(judgeLatest(base.slice(0, 29), { excluded }).method).toBe('weekday-median');
  });

  it('refuses to judge a missing latest day, and skips missing history days (unlike zeros)', () => {
    expect(() => judgeLatest([...base, Number.NaN])).toThrow(/no rows cannot be judged/);
    const withGap = base.slice();
    withGap[40] = Number.NaN;
    const gap = judgeLatest(withGap);
    expect(gap.historyUsed).toBe(base.length - 2);
    expect(gap.anomalous).toBe(false);
    // A zero is an observation: judged as the latest day it is a drop.
    const zero = judgeLatest([...base, 0]);
    expect(zero.anomalous).toBe(true);
    expect(zero.direction).toBe('below');
  });

  it('constant history: the same value is not anomalous, any departure is (zero spread)', () => {
    const flat = new Array(40).fill(12);
    const same = judgeLatest([...flat, 12]);
    expect(same.anomalous).toBe(false);
    expect(same.score).toBe(0);
    expect(judgeLatest([...flat, 13]).anomalous).toBe(true);
  });

  it('all-zero days: zero stays normal, a sudden count is flagged above', () => {
    const zeros = new Array(40).fill(0);
    expect(judgeLatest([...zeros, 0]).anomalous).toBe(false);
    const spike = judgeLatest([...zeros, 5]);
    expect(spike.anomalous).toBe(true);
    expect(spike.direction).toBe('above');
  });

  it('keeps excluded days out of the baseline: an excluded spike does not move the expected value', () => {
    const spiky = base.slice();
    spiky[63] = 5000;
    const excluded = spiky.map((_, i) => i === 63);
    const clean = judgeLatest([...base, base[63]!]);
    const kept = judgeLatest([...spiky, base[63]!], { excluded: [...excluded, false] });
    expect(Math.abs(kept.expected - clean.expected), `${kept.expected} vs ${clean.expected}`).toBeLessThan(5);
  });

  it('has no look-ahead: judgements of past days do not change when later days arrive', () => {
    const early = judgeEachDay(passengers.slice(0, 120));
    const late = judgeEachDay(passengers).slice(0, early.length);
    const strip = (js: OnlineJudgement[]) => js.map((j) => [j.index, j.anomalous, j.expected, j.score]);
    expect(strip(late)).toEqual(strip(early));
  });

  it('rejects bad options with a clear message', () => {
    expect(() => judgeLatest([])).toThrow(/at least the day to judge/);
    expect(() => judgeLatest(base, { alpha: 0 })).toThrow(/alpha/);
    expect(() => judgeLatest(base, { maxAnomalies: 0.5 })).toThrow(/at most 0.49/);
    expect(() => judgeLatest(base, { minStlDays: 14 })).toThrow(/must exceed two periods/);
    expect(() => judgeLatest(base, { excluded: [true] })).toThrow(/one entry per value/);
    expect(() => judgeLatest([1, Infinity, 3])).toThrow(/finite or NaN/);
  });
});
