import { conversionCheck } from './conversion/index.js';
import { freshnessCheck } from './freshness/index.js';
import { parityCheck } from './parity/index.js';
import { schemaCheck } from './schema/index.js';
import { seasonalCheck } from './seasonal/index.js';
import { segmentsCheck } from './segments/index.js';
import type { CheckModule } from './types.js';
import { volumeCheck } from './volume/index.js';

/**
 * Every check plumbline runs, in the order findings are reported. A check's id is
 * also its folder under checks/, its test file name and its config key.
 * Freshness comes first: its gate decides whether the day can be judged at all.
 */
export const registry: readonly CheckModule[] = [
  freshnessCheck,
  volumeCheck,
  seasonalCheck,
  conversionCheck,
  segmentsCheck,
  schemaCheck,
  parityCheck,
];

export function findCheck(id: string): CheckModule | undefined {
  return registry.find((check) => check.id === id);
}
