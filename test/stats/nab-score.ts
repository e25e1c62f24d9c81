/**
 * The Numenta Anomaly Benchmark's window scoring, for detections on a labelled
 * series: A. Lavin and S. Ahmad (2015), "Evaluating Real-time Anomaly Detection
 * Algorithms: the Numenta Anomaly Benchmark", IEEE ICMLA; rules as in NAB's
 * `nab/sweeper.py` (scaledSigmoid, calcSweepScore, calcScoreByThreshold) and
 * weights from its `config/profiles.json` (github.com/numenta/NAB, MIT):
 * - the first 15% of the rows are a probation period and not scored;
 * - a window earns the best of its detections, scaledSigmoid(-(right - i + 1) /
 *   width) x tpWeight / scaledSigmoid(-1), or -fnWeight with none;
 * - a detection outside every window costs scaledSigmoid(|i - prevRight| /
 *   (prevWidth - 1)) x fpWeight after a window, -fpWeight before the first;
 * - scaledSigmoid(y) = 2 / (1 + e^(5y)) - 1, and -1 from y >= 3.
 * Normalised as NAB reports it, 100 (raw - null) / (perfect - null), with null
 * the detector that flags nothing and perfect one that flags each window's
 * first row (from memory of NAB's scorer). NAB scores its 30-minute rows; here
 * the rows are days and the windows its windows cut to days.
 */

export const NAB_PROFILES = {
  standard: { tpWeight: 1, fpWeight: 0.11, fnWeight: 1 },
  reward_low_FP_rate: { tpWeight: 1, fpWeight: 0.22, fnWeight: 1 },
  reward_low_FN_rate: { tpWeight: 1, fpWeight: 0.11, fnWeight: 2 },
};

export type NabProfile = (typeof NAB_PROFILES)[keyof typeof NAB_PROFILES];

function scaledSigmoid(y: number): number {
  return y >= 3 ? -1 : 2 / (1 + Math.exp(5 * y)) - 1;
}

/** NAB score of `flagged` (row indices) on rows labelled with windows [left, right] of row indices, ascending. */
export function nabScore(rows: number, windows: ReadonlyArray<[number, number]>, flagged: readonly number[], profile: NabProfile): { raw: number; normalised: number } {
  const probation = Math.min(Math.floor(0.15 * rows), 0.15 * 5000);
  const maxTp = scaledSigmoid(-1);
  const scored = windows.filter(([, right]) => right >= probation);
  const best = scored.map(() => -profile.fnWeight);
  let fp = 0;
  const detections = new Set(flagged);
  let previous: [number, number] | undefined;
  for (let i = probation; i < rows; i++) {
    const w = scored.findIndex(([left, right]) => i >= left && i <= right);
    if (w >= 0) {
      const [left, right] = scored[w]!;
      if (detections.has(i)) best[w] = Math.max(best[w]!, (scaledSigmoid(-(right - i + 1) / (right - left + 1)) * profile.tpWeight) / maxTp);
      if (i === right) previous = scored[w];
      continue;
    }
    if (!detections.has(i)) continue;
    fp += previous === undefined ? -profile.fpWeight : scaledSigmoid(Math.abs(i - previous[1]) / (previous[1] - previous[0])) * profile.fpWeight;
  }
  const raw = best.reduce((a, b) => a + b, 0) + fp;
  const nothing = -profile.fnWeight * scored.length;
  const perfect = profile.tpWeight * scored.length;
  return { raw, normalised: (100 * (raw - nothing)) / (perfect - nothing) };
}
