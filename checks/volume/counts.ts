/** Events per person of a watched series (see `countSeries` in checks/series.ts for its days). */
import type { Counts } from '../series.js';

/** Events per person on each day with people; NaN where nobody sent the series (no rate to speak of). */
export function eventsPerPerson(counts: Counts): Float64Array {
  return counts.people.map((people, i) => (people > 0 ? counts.events[i]! / people : Number.NaN));
}
