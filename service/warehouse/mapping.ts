/**
 * What every warehouse engine shares: how the team's events table maps onto
 * plumbline's roles, and the limits of the parameter profiles. Dialect-free.
 */
import type { FlowStep } from '../../checks/types.js';

export interface WarehouseMapping {
  table: string;
  columns: { time: string; name: string; user: string; device: string; platform: string; version: string; params: string };
  dimensions: string[];
  /** Our platform name -> raw values in the platform column. */
  platforms: Record<string, string[]>;
}

/** Platform value used for rows whose raw platform is not mapped in the config. */
export const UNMAPPED_PLATFORM = 'other';
/** Strings longer than this are cut in parameter value profiles. */
export const VALUE_MAX_LENGTH = 64;
/** How many top values are kept per parameter key. */
export const TOP_VALUES = 12;
/** Keys with more distinct values than this in a day are not value-profiled from then on. */
export const LOW_CARDINALITY = 50;

/** The configured dimensions with the short aliases the statements give them (d0, d1, ...). */
export function dimensionAliases(mapping: WarehouseMapping): Array<{ name: string; alias: string }> {
  return mapping.dimensions.map((name, i) => ({ name, alias: `d${i}` }));
}

/** A step's `where` values as the text a parameter must equal. */
export function whereValues(expected: FlowStep['where'][string]): string[] {
  return (Array.isArray(expected) ? expected : [expected]).map(String);
}

/** True when no event can match two steps: their event names differ, or a key both filter on has no value in common. */
export function stepsExclusive(steps: FlowStep[]): boolean {
  return steps.every((a, i) =>
    steps.slice(i + 1).every((b) => {
      if (a.event !== b.event) return true;
      return Object.entries(a.where).some(([key, expected]) => {
        if (!(key in b.where)) return false;
        const theirs = new Set(whereValues(b.where[key]!));
        return whereValues(expected).every((value) => !theirs.has(value));
      });
    }),
  );
}

/**
 * "event.key" entries of keys whose values are not grouped, as key lists per
 * watched event: every split at a dot, as names may hold dots.
 */
export function untrackedByEvent(untrackedKeys: string[], events: string[]): Map<string, string[]> {
  const untracked = new Map<string, string[]>();
  for (const entry of untrackedKeys) {
    for (let dot = entry.indexOf('.'); dot >= 0; dot = entry.indexOf('.', dot + 1)) {
      const event = entry.slice(0, dot);
      if (events.includes(event)) untracked.set(event, [...(untracked.get(event) ?? []), entry.slice(dot + 1)]);
    }
  }
  return untracked;
}
