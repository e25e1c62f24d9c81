/**
 * Explanatory power and surprise of dimension values, and the choice of the
 * values that explain a change (the Adtributor algorithm).
 *
 * Citation: R. Bhagwan, R. Kumar, R. Ramjee, G. Varghese, S. Mohapatra,
 * H. Manoharan and P. Shah (2014), "Adtributor: Revenue Debugging in
 * Advertising Systems", 11th USENIX Symposium on Networked Systems Design and
 * Implementation (NSDI 14), pp. 43-55.
 *
 * For a measure split by the values j of one dimension, with forecast F_j and
 * actual A_j (totals F and A):
 * - explanatory power EP_j = (A_j - F_j) / (A - F): the share of the total
 *   change that value j accounts for (shares sum to 1; a value moving against
 *   the total has a negative share);
 * - surprise S_j = 0.5 [p log2(2p / (p + q)) + q log2(2q / (p + q))] with
 *   p = F_j / F and q = A_j / A: value j's term of the Jensen-Shannon
 *   divergence between the expected and the actual distribution over the
 *   values (a term with p or q = 0 contributes 0 for that part). We use log
 *   base 2, so the divergence of two distributions lies in [0, 1].
 * - Per dimension, values are taken in decreasing surprise; a value joins the
 *   explanation when its EP exceeds T_EEP, until the explanation's EP reaches
 *   T_EP. Dimensions that reach T_EP are ranked by the summed surprise of
 *   their explanation. The paper's defaults, as we recall them from its
 *   evaluation (from memory, to verify against the paper): T_EEP = 0.1,
 *   T_EP = 0.67.
 *
 * Complexity: O(m log m) per dimension with m values.
 *
 * Example (worked by hand in test/causes/explanatory-power.test.ts):
 *   explain([{ dimension: 'country', values: [
 *     { value: 'US', forecast: 800, actual: 790 },
 *     { value: 'CA', forecast: 100, actual: 20 },
 *     { value: 'MX', forecast: 100, actual: 95 } ] }])
 *   // [{ dimension: 'country', values: [{ value: 'CA', ep: 0.842, surprise: 0.0194, ... }], ep: 0.842, surprise: 0.0194 }]
 */

export interface ValueChange {
  value: string;
  forecast: number;
  actual: number;
}

export interface ScoredValue extends ValueChange {
  /** Explanatory power: share of the total change. */
  ep: number;
  /** Surprise: this value's term of the Jensen-Shannon divergence (log base 2). */
  surprise: number;
}

export interface Explanation {
  dimension: string;
  values: ScoredValue[];
  /** Summed explanatory power of the chosen values. */
  ep: number;
  /** Summed surprise of the chosen values: how the dimensions are ranked. */
  surprise: number;
}

export const ADTRIBUTOR_DEFAULTS = { minValueEp: 0.1, minTotalEp: 0.67 };

function term(x: number, y: number): number {
  return x > 0 ? x * Math.log2((2 * x) / (x + y)) : 0;
}

/** EP and surprise of each value of one dimension. */
export function scoreValues(values: readonly ValueChange[]): ScoredValue[] {
  if (values.length === 0) throw new Error('explanatory power needs at least one dimension value');
  for (const v of values) {
    if (!(v.forecast >= 0 && v.actual >= 0)) throw new Error(`explanatory power needs non-negative forecast and actual, got ${v.value}: ${v.forecast} / ${v.actual}`);
  }
  const forecast = values.reduce((sum, v) => sum + v.forecast, 0);
  const actual = values.reduce((sum, v) => sum + v.actual, 0);
  const change = actual - forecast;
  return values.map((v) => {
    const p = forecast > 0 ? v.forecast / forecast : 0;
    const q = actual > 0 ? v.actual / actual : 0;
    return { ...v, ep: change === 0 ? 0 : (v.actual - v.forecast) / change, surprise: 0.5 * (term(p, q) + term(q, p)) };
  });
}

/** The dimensions whose values explain the change, best first (empty when none reaches `minTotalEp`). */
export function explain(
  dimensions: ReadonlyArray<{ dimension: string; values: readonly ValueChange[] }>,
  thresholds: { minValueEp: number; minTotalEp: number } = ADTRIBUTOR_DEFAULTS,
): Explanation[] {
  const explanations: Explanation[] = [];
  for (const { dimension, values } of dimensions) {
    if (values.length === 0) continue;
    const scored = scoreValues(values).sort((a, b) => b.surprise - a.surprise || a.value.localeCompare(b.value));
    const chosen: ScoredValue[] = [];
    let ep = 0;
    for (const value of scored) {
      if (value.ep <= thresholds.minValueEp) continue;
      chosen.push(value);
      ep += value.ep;
      if (ep >= thresholds.minTotalEp) break;
    }
    if (ep >= thresholds.minTotalEp) {
      explanations.push({ dimension, values: chosen, ep, surprise: chosen.reduce((sum, v) => sum + v.surprise, 0) });
    }
  }
  return explanations.sort((a, b) => b.surprise - a.surprise);
}
