import type { CheckModule } from './types.js';

/**
 * Every check plumbline runs, in the order findings are reported. A check's id is
 * also its folder under checks/, its test file name and its config key.
 */
export const registry: readonly CheckModule[] = [];

export function findCheck(id: string): CheckModule | undefined {
  return registry.find((check) => check.id === id);
}
