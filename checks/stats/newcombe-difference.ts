/**
 * Confidence interval for the difference of two independent proportions,
 * Newcombe's hybrid score method (his method 10).
 *
 * Citation: R. G. Newcombe (1998), "Interval estimation for the difference
 * between independent proportions: comparison of eleven methods", Statistics in
 * Medicine 17:873-890, method 10 ("score, no continuity correction").
 *
 * With p_i = x_i / n_i and (l_i, u_i) their Wilson intervals (`wilson.ts`),
 * d = p1 - p2, low = d - sqrt((p1 - l1)^2 + (u2 - p2)^2),
 * high = d + sqrt((u1 - p1)^2 + (p2 - l2)^2).
 *
 * Complexity: O(1).
 *
 * Example:
 *   newcombeDifference(56, 70, 48, 80) // { difference: 0.2, low: 0.0524, high: 0.3339 } (rounded; Newcombe 1998)
 */
import { checkCount, wilson } from './wilson.js';

export interface DifferenceInterval {
  /** p1 - p2. */
  difference: number;
  low: number;
  high: number;
}

export function newcombeDifference(x1: number, n1: number, x2: number, n2: number, confidence = 0.95): DifferenceInterval {
  checkCount(x1, n1, 'newcombeDifference (group 1)');
  checkCount(x2, n2, 'newcombeDifference (group 2)');
  const p1 = x1 / n1;
  const p2 = x2 / n2;
  const a = wilson(x1, n1, confidence);
  const b = wilson(x2, n2, confidence);
  const difference = p1 - p2;
  return {
    difference,
    low: difference - Math.sqrt((p1 - a.low) ** 2 + (b.high - p2) ** 2),
    high: difference + Math.sqrt((a.high - p1) ** 2 + (p2 - b.low) ** 2),
  };
}
