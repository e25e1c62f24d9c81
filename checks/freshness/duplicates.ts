/**
 * Duplicate rows from the pipeline: a load that runs twice doubles the events
 * of every event of a platform while people stay the same. One app event fired
 * twice is the `volume` check's `events_per_person`; here only most of a
 * platform's watched events jumping together counts.
 */
import { median } from '../stats/index.js';
import { baselineExclusions, withoutDays } from '../series.js';
import type { CheckInput } from '../types.js';
import { expectation } from '../volume/baseline.js';
import { countSeries, eventRows, platformDays } from '../series.js';
import { eventsPerPerson } from '../volume/counts.js';

export interface EventJump {
  event: string;
  /** Events per person over their expectation, per day (NaN where either is unknown). */
  factors: Float64Array;
  people: number;
}

export interface DuplicateJudgement {
  /** Watched events with enough people and history to judge. */
  judged: EventJump[];
  /** Those whose events per person rose by more than the threshold. */
  jumped: EventJump[];
  /** Median factor over the judged events, per day (the excerpt's series). */
  medianFactors: Float64Array;
}

/**
 * Events per person of each watched event of `platform` against the same
 * day-of-week expectation as `volume` (the days either check flagged, and
 * calendar days, left out), and which of them rose by more than `minRise`.
 */
export function duplicateJudgement(input: CheckInput, platform: string, minPeople: number, minRise: number, ownKey: string): DuplicateJudgement {
  const last = input.days.length - 1;
  const sending = platformDays(input, platform);
  const judged: EventJump[] = [];
  for (const event of input.flow.events) {
    const counts = countSeries(input, eventRows(input, event, platform), sending);
    const people = counts.people[last]!;
    if (!(people >= minPeople)) continue;
    const skip = new Set([
      ...baselineExclusions(ownKey, input.anomalous, input.calendar),
      ...(input.anomalous[`volume:events_per_person:${event}:${platform}:*`] ?? []),
    ]);
    const rates = eventsPerPerson(counts);
    const fit = expectation(withoutDays(rates, input.days, skip), 0);
    if (!Number.isFinite(fit.expected[last]!)) continue;
    judged.push({ event, people, factors: rates.map((rate, i) => rate / fit.expected[i]!) });
  }
  const jumped = judged.filter((jump) => jump.factors[last]! > 1 + minRise);
  const medianFactors = new Float64Array(input.days.length).fill(Number.NaN);
  for (let i = 0; i <= last; i++) {
    const values = judged.map((jump) => jump.factors[i]!).filter((value) => Number.isFinite(value));
    if (values.length > 0) medianFactors[i] = median(values);
  }
  return { judged, jumped, medianFactors };
}

/** Most of the platform's judged events (more than half, and at least two) jumped together. */
export function mostJumped(judgement: DuplicateJudgement): boolean {
  return judgement.jumped.length >= 2 && 2 * judgement.jumped.length > judgement.judged.length;
}
