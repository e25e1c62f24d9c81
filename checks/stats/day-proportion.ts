/**
 * Prediction of a new day's proportion from earlier days that vary more than
 * binomially: a random-effects model with the DerSimonian-Laird between-day
 * variance and a t reference when that variance is estimated.
 *
 * Citation: R. DerSimonian and N. Laird (1986), "Meta-analysis in clinical
 * trials", Controlled Clinical Trials 7(3):177-188 (the moment estimator of
 * tau^2); J. P. T. Higgins, S. G. Thompson and D. J. Spiegelhalter (2009), "A
 * re-evaluation of random-effects meta-analysis", JRSS A 172(1):137-159 (the
 * prediction of a new study's effect, variance tau^2 + SE(mu)^2, against t).
 * Checked against R's metafor::rma(method = "DL") and qt
 * (test/fixtures/day-proportion/runner.R).
 *
 * Model: day i has proportion p_i = x_i / n_i, with variance v_i + tau^2:
 * binomial v_i = p (1 - p) / n_i around a mean that itself varies from day to
 * day by tau^2 (traffic mix, campaigns; beta-binomial style: large cohorts do
 * not make a day's rate arbitrarily precise). p is the baseline days' pooled
 * rate (the pooled rate with the judged day when the baseline is all 0 or all
 * 1). Q = sum (p_i - p)^2 / v_i, the Pearson chi-square of the baseline days
 * (`chi-square-homogeneity.ts`); tau^2 = max(0, (Q - (k - 1)) / (S1 - S2 / S1))
 * with S1 = sum 1/v_i, S2 = sum 1/v_i^2. mu = sum w_i p_i / sum w_i, w_i = 1 /
 * (v_i + tau^2), SE(mu)^2 = 1 / sum w_i. The judged day's deviation p_D - mu has
 * variance V = v_D + tau^2 + SE(mu)^2, v_D = p (1 - p) / n_D.
 *
 * Reference distribution: when the baseline days vary more than binomially
 * (tau^2 > 0) the day's variance is estimated from their spread, and for
 * equal cohorts (p_D - mu) / sqrt(V) is exactly the standardised new
 * observation of a normal sample, t on k - 1 degrees of freedom; when they do
 * not (tau^2 = 0) V is the known binomial variance and the reference is the
 * normal. Simulated false alarms (test/stats/day-proportion.test.ts, 20,000
 * baselines a case) sit at the nominal rate within sampling error when the
 * day-to-day variation dominates or matches the binomial (the large cohorts
 * where the quasi-binomial test of this check failed: phi = Q / (k - 1)
 * scaling p (1 - p) / n against normal critical values ran at 3 to 11 times
 * nominal), and below it for binomial days. Known gap: with only 7 baseline
 * days and a variation near the binomial's, tau^2 is estimated 0 about a
 * fifth of the time and the normal is then too narrow (1.4 times nominal at
 * one-sided 0.01, 3 times at 0.001).
 *
 * Complexity: O(k).
 *
 * Example (seven days of about 1,000 people at 80% with a 2-point day-to-day
 * wobble; a day of 1,000 at 74%):
 *   predictDayProportion([812, 776, 801, 829, 783, 795, 818], [1000, 990, 1010, 1005, 995, 1000, 1000], 740, 1000)
 *   // { center: 0.8020, tau2: 0.000102, variance: 0.000298, df: 6, score: -3.59, ... } (rounded; R's metafor
 *   // gives tau2, center and its standard error, test/fixtures/day-proportion)
 */
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';
import { chiSquareHomogeneity } from './chi-square-homogeneity.js';
import { tQuantile } from './student-t.js';
import { checkCount } from './wilson.js';

export interface DayProportionPrediction {
  /** Random-effects mean of the baseline days' proportions. */
  center: number;
  /** Between-day variance tau^2 (DerSimonian-Laird), 0 when the days vary no more than binomially. */
  tau2: number;
  /** Cochran's Q (the Pearson chi-square of the baseline days) on k - 1 degrees of freedom. */
  q: number;
  /** Variance of the judged day's proportion minus `center`. */
  variance: number;
  /** Degrees of freedom of the reference t: k - 1, or Infinity (the normal) when tau2 is 0. */
  df: number;
  /** (p_D - center) / sqrt(variance); 0 when there is no variance at all (every day all 0 or all 1). */
  score: number;
}

/** Predicts day D (dayX of dayN) from the baseline days (x_i of n_i); see the file comment. */
export function predictDayProportion(successes: readonly number[], trials: readonly number[], dayX: number, dayN: number): DayProportionPrediction {
  const k = successes.length;
  if (k < 2) throw new Error(`predictDayProportion needs at least 2 baseline days, got ${k}`);
  if (trials.length !== k) throw new Error(`predictDayProportion needs one trial count per day: ${k} successes, ${trials.length} trials`);
  checkCount(dayX, dayN, 'predictDayProportion (judged day)');
  let x = 0;
  let n = 0;
  for (let i = 0; i < k; i++) {
    checkCount(successes[i]!, trials[i]!, `predictDayProportion (baseline day ${i})`);
    x += successes[i]!;
    n += trials[i]!;
  }
  const baseline = x / n;
  // An all-0 or all-1 baseline has no binomial variance of its own: borrow the rate with the judged day.
  const p = baseline > 0 && baseline < 1 ? baseline : (x + dayX) / (n + dayN);
  const dayP = dayX / dayN;
  if (p === 0 || p === 1) return { center: baseline, tau2: 0, q: 0, variance: 0, df: Infinity, score: 0 };
  const unit = p * (1 - p);
  const q = baseline > 0 && baseline < 1 ? chiSquareHomogeneity(successes, trials).statistic : 0;
  let s1 = 0;
  let s2 = 0;
  for (let i = 0; i < k; i++) {
    const w = trials[i]! / unit;
    s1 += w;
    s2 += w * w;
  }
  const tau2 = Math.max(0, (q - (k - 1)) / (s1 - s2 / s1));
  let weights = 0;
  let weighted = 0;
  for (let i = 0; i < k; i++) {
    const w = 1 / (unit / trials[i]! + tau2);
    weights += w;
    weighted += (w * successes[i]!) / trials[i]!;
  }
  const center = weighted / weights;
  const variance = unit / dayN + tau2 + 1 / weights;
  return { center, tau2, q, variance, df: tau2 > 0 ? k - 1 : Infinity, score: (dayP - center) / Math.sqrt(variance) };
}

/** Beyond this many degrees of freedom t is the normal to 1e-6 (and stdlib's t quantile loses its way past about 1e16). */
const NORMAL_DF = 1e7;

/** The upper-tail critical value at `tail` (e.g. 1e-4) of t with `df` degrees of freedom, the normal's for df beyond 1e7. */
export function criticalValue(tail: number, df: number): number {
  if (!(tail > 0 && tail < 0.5)) throw new Error(`criticalValue needs a tail probability strictly between 0 and 0.5, got ${tail}`);
  if (!(df > 0)) throw new Error(`criticalValue needs degrees of freedom > 0, got ${df}`);
  return df <= NORMAL_DF ? tQuantile(1 - tail, df) : normalQuantile(1 - tail, 0, 1);
}
