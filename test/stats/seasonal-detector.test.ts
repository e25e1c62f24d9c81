import { describe, expect, it } from 'vitest';
import { generalizedEsd } from '../../checks/stats/generalized-esd.js';
import { seasonalHybridEsd } from '../../checks/stats/hybrid-esd.js';
import type { OnlineJudgement } from '../../checks/stats/seasonal-detector.js';
import { judgeEachDay, judgeLatest } from '../../checks/stats/seasonal-detector.js';
import { seasonalCheck } from '../../checks/seasonal/index.js';
import { NAB_PROFILES, nabScore } from './nab-score.js';
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
/** The `seasonal` check's shipped sensitivity: the chance that a clean day of one series is flagged. */
const SHIPPED = seasonalCheck.options.parse({}).sensitivity;

function inWindow(date: string): string | undefined {
  return labels.windows.find((w) => date >= w.from && date <= w.to)?.name;
}

function daysToHoliday(date: string): number {
  return Math.min(...labels.usFederalHolidays.dates.map((h) => Math.abs(Date.parse(h) - Date.parse(date)) / DAY));
}

const windowRows = labels.windows.map((w): [number, number] => [dates.indexOf(w.from), dates.indexOf(w.to)]);

/** Flagged days, per-window hits, day precision and event recall, and NAB's window score, printed for the record. */
function score(flagged: number[], title: string): { missing: string[]; farFromHolidays: string[]; precision: number; recall: number } {
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
      `  NAB window score (normalised, 0 = flag nothing, 100 = each window on its first day): ${Object.entries(NAB_PROFILES)
        .map(([name, profile]) => `${name} ${nabScore(dates.length, windowRows, flagged, profile).normalised.toFixed(1)}`)
        .join(', ')}`,
    ].join('\n'),
  );
  return { missing: hits.filter((h) => h.required && !h.hit).map((h) => h.name), farFromHolidays, precision, recall };
}

describe('seasonal detector on real data: NYC taxi passengers (NAB)', () => {
  // Passenger counts are judged on log(1 + x), as the seasonal check judges every count (checks/stats/README.md).
  it(`online at the shipped sensitivity ${SHIPPED}: every required window, precision at least 0.6, recall 0.8, nothing unexplained beyond the return from summer`, () => {
    const flagged = judgeEachDay(passengers, { alpha: SHIPPED, transform: 'log1p' }).filter((j) => j.anomalous);
    for (const j of flagged) {
      console.log(`  ${dates[j.index]} ${j.method} observed ${j.observed} expected ${j.expected.toFixed(0)} band ${j.low.toFixed(0)}..${j.high.toFixed(0)} score ${j.score.toFixed(2)} critical ${j.critical.toFixed(2)}`);
    }
    const result = score(
      flagged.map((j) => j.index),
      `online at sensitivity ${SHIPPED} on log(1 + x) (each day from its own past, flagged days kept out of later baselines)`,
    );
    expect(result.missing, 'labelled windows with no flagged day').toEqual([]);
    // Measured: 10 of 16 flagged days inside a window (0.63); 4 of 5 windows (the marathon, not required, is missed);
    // 2014-09-05 to 09-08 are the return from summer (next test).
    expect(result.precision).toBeGreaterThanOrEqual(0.6);
    expect(result.recall).toBeGreaterThanOrEqual(0.8);
    const unexplained = result.farFromHolidays.filter((day) => !(day >= '2014-09-05' && day <= '2014-09-08'));
    expect(unexplained, `unexplained flags: ${result.farFromHolidays.join(', ')}`).toEqual([]);
  });

  it('online at 0.001, five times the shipped rate: every required window, and no unexplained flag beyond the return from summer', () => {
    const flagged = judgeEachDay(passengers, { alpha: 0.001, transform: 'log1p' }).filter((j) => j.anomalous);
    const result = score(
      flagged.map((j) => j.index),
      'online at alpha 0.001 on log(1 + x)',
    );
    expect(result.missing, 'labelled windows with no flagged day').toEqual([]);
    // 2014-09-05 to 09-08, four to seven days after Labor Day: the city back from summer, +19% on the same weekday a
    // week before, a level shift the local level sees (unlabelled in NAB). Nothing else outside the windows.
    const unexplained = result.farFromHolidays.filter((day) => !(day >= '2014-09-05' && day <= '2014-09-08'));
    expect(unexplained, `unexplained flags: ${result.farFromHolidays.join(', ')}`).toEqual([]);
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

interface RCase {
  case: string;
  alpha: number;
  transform: 'none' | 'log1p';
  input: number[];
  expected: number;
  low: number;
  high: number;
  score: number;
  critical: number;
  scale: number;
  anomalous: boolean;
}

describe("seasonal detector against its recipe computed in R (test/fixtures/seasonal-esd/runner.R: R's stl, median, sd, qt)", () => {
  const reference = JSON.parse(readFixture('seasonal-esd', 'detector.json')) as { r_version: string; cases: RCase[] };
  // R runs stl's 15 robustness passes; the detector stops by the authors' stlez rule (README): values agree to within
  // 1% of the band's width (measured: at most 0.6%), the verdict and the critical value exactly.
  for (const c of reference.cases) {
    it(`${c.case}: verdict, expected value, band, score and critical value as R computes them`, () => {
      const ours = judgeLatest(c.input, { alpha: c.alpha, transform: c.transform });
      expect(ours.method).toBe('stl-esd');
      expect(ours.anomalous).toBe(c.anomalous);
      expect(ours.critical).toBeCloseTo(c.critical, 9);
      const width = c.high - c.low;
      for (const key of ['expected', 'low', 'high'] as const) expect(Math.abs(ours[key] - c[key]), `${key}: ours ${ours[key]}, R ${c[key]}`).toBeLessThan(0.01 * width);
      expect(Math.abs(ours.score - c.score), `score: ours ${ours.score}, R ${c.score}`).toBeLessThan(0.05);
      expect(Math.abs(ours.scale / c.scale - 1), `scale: ours ${ours.scale}, R ${c.scale}`).toBeLessThan(0.01);
    });
  }
});

describe('seasonal detector on trending series (simulated: level 1000, weekly pattern, noise sd 10, +-0.5 a day)', () => {
  const weekly = [0, 40, 55, 60, 58, 30, -120];
  const SERIES = 250;
  const series = (slope: number, seed: number) => {
    const rand = prng(seed);
    return Array.from({ length: 85 }, (_, t) => 1000 + slope * t + weekly[t % 7]! + 10 * normal(rand));
  };

  // Issue 15: residuals against the window's median put a trending series' latest day half a window's growth away
  // (+21 here), so a rising series hid drops (caught about 1% of the time at 0.005, 5% at 0.05) and a falling one spikes.
  // Then, with a local level, the generalized ESD's critical value (a maximum over the 85-day window, Bonferroni-like:
  // about 4.2 forecast sd at 0.005) still caught a 6 sd move only 85-89% of the time; the day is one new observation and
  // its critical value is now the one-point prediction interval's (Student t at the per-day level).
  it(`catches a 6 sd drop and a 6 sd spike on rising and falling series at the shipped sensitivity ${SHIPPED} (${SERIES} series each), and does not lag`, () => {
    const rows: string[] = [];
    for (const slope of [0.5, -0.5]) {
      const caught = { drop: 0, spike: 0 };
      let lag = 0;
      for (let s = 0; s < SERIES; s++) {
        const y = series(slope, 1000 + s);
        const truth = 1000 + slope * 84 + weekly[84 % 7]!;
        lag += judgeLatest(y, { alpha: SHIPPED }).expected - truth;
        for (const [key, shift] of [['drop', -60], ['spike', 60]] as const) {
          if (judgeLatest([...y.slice(0, 84), y[84]! + shift], { alpha: SHIPPED }).anomalous) caught[key]++;
        }
      }
      rows.push(`slope ${slope}: power drop ${(caught.drop / SERIES).toFixed(3)} spike ${(caught.spike / SERIES).toFixed(3)}; mean expected - truth ${(lag / SERIES).toFixed(2)}`);
      expect(caught.drop / SERIES, rows.at(-1)).toBeGreaterThanOrEqual(0.9);
      expect(caught.spike / SERIES, rows.at(-1)).toBeGreaterThanOrEqual(0.9);
      expect(Math.abs(lag / SERIES), rows.at(-1)).toBeLessThan(3);
    }
    console.log(`6 sd moves on trending series at ${SHIPPED}, ${SERIES} series per slope:\n  ${rows.join('\n  ')}`);
  });

  it('flags a clean latest day at the nominal rate alpha (within sampling error), on flat and trending series', () => {
    // The size of the per-day test: alpha is the chance that a clean day is flagged. 4,000 clean series per slope;
    // three binomial standard errors of the rate at each alpha.
    const N = 4000;
    const lines: string[] = [];
    for (const slope of [0, 0.5]) {
      const hits = { 0.05: 0, 0.01: 0 };
      for (let s = 0; s < N; s++) {
        const y = series(slope, 50_000 + s);
        for (const alpha of [0.05, 0.01] as const) if (judgeLatest(y, { alpha }).anomalous) hits[alpha]++;
      }
      for (const alpha of [0.05, 0.01] as const) {
        const se = Math.sqrt((alpha * (1 - alpha)) / N);
        lines.push(`slope ${slope}, alpha ${alpha}: latest day flagged in ${hits[alpha]} of ${N} clean series (${(hits[alpha] / N).toFixed(4)}; 3 se ${(3 * se).toFixed(4)})`);
        expect(Math.abs(hits[alpha] / N - alpha), lines.join('\n')).toBeLessThan(3 * se);
      }
    }
    console.log(lines.join('\n'));
  });
});

describe('seasonal detector on counts: log(1 + x) (multiplicative weekly pattern and noise)', () => {
  // Weekends at a third of a weekday, noise 5% of the day's level: on the raw scale a weekend's spread is a third of a
  // weekday's, and one scale for both hides a weekend collapse.
  const mult = [0.3, 1, 1.05, 1.1, 1.05, 0.95, 0.3];
  const counts = (seed: number, n = 84) => {
    const rand = prng(seed);
    return Array.from({ length: n }, (_, t) => Math.round(2000 * mult[t % 7]! * Math.exp(0.05 * normal(rand))));
  };

  it('flags a Sunday down 40% on the log scale, which the raw scale misses', () => {
    // Index 84 is a Sunday (84 % 7 = 0): usual 600.
    const y = [...counts(21), 360];
    expect(judgeLatest(y, { alpha: SHIPPED }).anomalous).toBe(false);
    const judged = judgeLatest(y, { alpha: SHIPPED, transform: 'log1p' });
    expect(judged, JSON.stringify(judged)).toMatchObject({ anomalous: true, direction: 'below', observed: 360 });
    expect(judged.expected).toBeGreaterThan(540);
    expect(judged.expected).toBeLessThan(660);
    // The band comes back in counts and is wider above than below (a ratio band).
    expect(judged.high - judged.expected).toBeGreaterThan(judged.expected - judged.low);
  });

  it('raises no more false alarms on clean counts than on the raw scale', () => {
    let logFlags = 0;
    let rawFlags = 0;
    let judged = 0;
    for (let seed = 1; seed <= 6; seed++) {
      const y = counts(300 + seed, 250);
      const log = judgeEachDay(y, { alpha: SHIPPED, transform: 'log1p' });
      judged += log.filter((j) => j.method !== 'insufficient-history').length;
      logFlags += log.filter((j) => j.anomalous).length;
      rawFlags += judgeEachDay(y, { alpha: SHIPPED }).filter((j) => j.anomalous).length;
    }
    console.log(`clean multiplicative counts, ${judged} judged days at ${SHIPPED}: ${logFlags} flagged on log(1 + x), ${rawFlags} on the raw scale`);
    expect(logFlags / judged).toBeLessThan(0.005);
    expect(logFlags).toBeLessThanOrEqual(rawFlags);
  });

  it('rejects negative values on the log scale', () => {
    expect(() => judgeLatest([...counts(1, 40), -1], { transform: 'log1p' })).toThrow(/needs values >= 0/);
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

  it('gives the example of its doc comment (numbers from R, test/fixtures/seasonal-esd/detector.json)', () => {
    const profile = [55, 58, 59, 60, 57, 48, 45];
    const rates = Array.from({ length: 56 }, (_, t) => profile[t % 7]! + ((t * 7) % 5) * 0.4);
    const r = judgeLatest([...rates, 41]);
    expect(r.method).toBe('stl-esd');
    expect(r.anomalous).toBe(true);
    // R: expected 55.766, low 52.991, high 58.542, score -21.43, critical 4.0272.
    expect([r.expected, r.low, r.high].map((v) => Number(v.toFixed(1)))).toEqual([55.8, 53.0, 58.5]);
    expect(r.score).toBeCloseTo(-21.43, 1);
    expect(r.critical).toBeCloseTo(4.0272, 4);
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

  it('stops flagging a lasting level shift once a tenth of the window is anomalous (Rosner\'s bound), and the level follows', () => {
    // Flagged days stay out of later baselines, so without the bound a shift would be flagged for as long as it lasts.
    const rand = prng(8);
    const weekly = [0, 40, 55, 60, 58, 30, -120];
    const y = Array.from({ length: 130 }, (_, t) => 1000 + (t >= 90 ? 80 : 0) + weekly[t % 7]! + 10 * normal(rand));
    const flagged = judgeEachDay(y).filter((j) => j.anomalous).map((j) => j.index);
    const shifted = flagged.filter((i) => i >= 90);
    expect(shifted.length, `flagged: ${flagged.join(', ')}`).toBeGreaterThan(0);
    expect(shifted.length, `flagged: ${flagged.join(', ')}`).toBeLessThanOrEqual(10);
    expect(flagged.filter((i) => i >= 110), `flagged: ${flagged.join(', ')}`).toEqual([]);
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
