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
  /** Most distinct values a day's rollup keeps (ROW_LIMITS); DEFAULT_ROW_LIMITS when absent. */
  limits?: RowLimits;
}

/**
 * What bounds the rollup's rows, per platform and day: distinct event names
 * (watched events always kept), app versions, values of each dimension, and
 * parameter keys of one watched event. The values with the most events are
 * kept; the rest are left out of the per-value rows (an event left out is
 * left out of every row) and only counted, so a day of hostile values
 * cannot fill the memory of the service or the state schema.
 */
export const ROW_LIMITS = ['event_names', 'versions', 'dimension_values', 'param_keys'] as const;
export type RowLimit = (typeof ROW_LIMITS)[number];
export type RowLimits = Record<RowLimit, number>;
/** Common practice, not from a source: tens of times what a tracking plan of an app holds. */
export const DEFAULT_ROW_LIMITS: RowLimits = { event_names: 5000, versions: 500, dimension_values: 1000, param_keys: 200 };

/** Distinct values seen per platform, for each limit its statement bounds (the most of any one dimension or event). */
export type SeenCounts = Map<string, Partial<Record<RowLimit, number>>>;

export function limitsOf(mapping: WarehouseMapping): RowLimits {
  return mapping.limits ?? DEFAULT_ROW_LIMITS;
}

/** Platform value used for rows whose raw platform is not mapped in the config. */
export const UNMAPPED_PLATFORM = 'other';
/** Strings longer than this are cut in parameter value profiles. */
export const VALUE_MAX_LENGTH = 64;
/** How many top values are kept per parameter key. */
export const TOP_VALUES = 12;
/** Keys with more distinct values than this in a day are not value-profiled from then on. */
export const LOW_CARDINALITY = 50;

/**
 * Rows plumbline cannot use as they are, in the order a row is counted (under
 * its first reason only). `no_event_name` rows are set aside: no rollup
 * counts them. The others are repaired and used: a version equal to the
 * all-versions marker reads as no version, so it can never collide with the
 * all-versions rows; a text key (event name, version, dimension value,
 * parameter key) longer than TEXT_KEY_MAX_LENGTH is cut with a marker; a
 * parameter object a JSON reader cannot take (a number beyond double
 * precision anywhere in it, which ClickHouse's parsers refuse outright; or,
 * in a ClickHouse text column, text that is not JSON) reads as no parameters.
 */
export const BAD_ROW_REASONS = ['no_event_name', 'reserved_version', 'long_text', 'unreadable_params'] as const;
export type BadRowReason = (typeof BAD_ROW_REASONS)[number];
/** Reasons whose rows no rollup counts; the others are counted in their repaired form. */
export const SET_ASIDE_REASONS: readonly BadRowReason[] = ['no_event_name'];

/** The version of the all-versions rows of event_days and funnel_days. */
export const ALL_VERSIONS = '*';
/**
 * Longest text key kept whole, in characters: four of them at four bytes a
 * character stay under PostgreSQL's limit on a B-tree index entry (about
 * 2,700 bytes, a third of an 8 kB page).
 */
export const TEXT_KEY_MAX_LENGTH = 128;
/** Appended to a cut key, which keeps TEXT_KEY_MAX_LENGTH characters in all. */
export const CUT_MARKER = '…';
/**
 * Halfway between the largest finite double (IEEE 754 binary64) and the next
 * power of two: a decimal number at least this large rounds to infinity when
 * read as a double. Written out so PostgreSQL compares exact numerics with it.
 */
export const DOUBLE_OVERFLOW = '1.7976931348623158079372897e308';
/** Half the smallest positive double: a nonzero decimal number below this in size reads as 0. */
export const DOUBLE_UNDERFLOW = '2.4703282292062327208828e-324';

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
