/**
 * Benjamini-Hochberg step-up procedure: which of m tests to report while the
 * expected share of false reports among the reported stays at most q (the
 * false discovery rate), for independent or positively dependent tests.
 *
 * Citation: Y. Benjamini and Y. Hochberg (1995), "Controlling the False
 * Discovery Rate: A Practical and Powerful Approach to Multiple Testing",
 * Journal of the Royal Statistical Society B 57(1):289-300; positive
 * dependence: Y. Benjamini and D. Yekutieli (2001), "The control of the false
 * discovery rate in multiple testing under dependency", Annals of Statistics
 * 29(4):1165-1188. Adjusted p-values as R's `p.adjust(p, method = "BH")`.
 *
 * With the p-values sorted p_(1) <= ... <= p_(m): reject the k smallest, k the
 * largest i with p_(i) <= i q / m. Equivalently, the adjusted p-value of p_(i)
 * is min over j >= i of min(1, m p_(j) / j), and a test is rejected when its
 * adjusted p-value is at most q. Missing p-values (NaN) are left out of m and
 * stay NaN, as `p.adjust` does with NA.
 *
 * Complexity: O(m log m) (one sort).
 *
 * Example (the paper's own, section 4: 15 p-values at q = 0.05 reject 4):
 *   benjaminiHochberg([0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344,
 *                      0.0459, 0.324, 0.4262, 0.5719, 0.6528, 0.759, 1]).adjusted.slice(0, 4)
 *   // [0.0015, 0.003, 0.0095, 0.035625]; rejected at 0.05: the first four
 */

export interface BenjaminiHochbergResult {
  /** BH-adjusted p-values in the input order (NaN where the input was NaN). */
  adjusted: number[];
  /** Whether each test is rejected at `q`. */
  rejected: boolean[];
}

export function benjaminiHochberg(pValues: readonly number[], q = 0.05): BenjaminiHochbergResult {
  if (!(q > 0 && q <= 1)) throw new Error(`the false discovery rate q must lie in (0, 1], got ${q}`);
  for (const p of pValues) {
    if (!Number.isNaN(p) && !(p >= 0 && p <= 1)) throw new Error(`p-values must lie in [0, 1] (NaN for a missing one), got ${p}`);
  }
  const order = pValues
    .map((p, i) => ({ p, i }))
    .filter((entry) => !Number.isNaN(entry.p))
    .sort((a, b) => a.p - b.p || a.i - b.i);
  const m = order.length;
  const adjusted = pValues.map(() => Number.NaN);
  let running = 1;
  for (let rank = m; rank >= 1; rank--) {
    const { p, i } = order[rank - 1]!;
    running = Math.min(running, (m * p) / rank);
    adjusted[i] = running;
  }
  return { adjusted, rejected: adjusted.map((p) => p <= q) };
}
