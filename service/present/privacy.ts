/**
 * Which parameter values may be shown. Event data is about people: the rollups
 * never hold person or device ids (only counts), and they profile values only
 * for keys with few distinct values, so a value can reach a message only
 * through a low-cardinality key. Renderers still check, per key and over the
 * days shown, that the key stayed within that limit, and `delivery.hide_values`
 * hides values everywhere.
 */
import type { Day, Finding } from '../../checks/types.js';
import { quoteIdent, type Db } from '../db/sql.js';
import { LOW_CARDINALITY } from '../warehouse/mapping.js';
import { cleanText } from './text.js';

/** Longest parameter value shown. */
export const VALUE_MAX_CHARS = 40;

export interface ValuePolicy {
  /** Whether values of this event's parameter key may be shown. */
  visible(event: string, key: string): boolean;
}

export const HIDE_ALL_VALUES: ValuePolicy = { visible: () => false };

interface ParamKey {
  event: string;
  key: string;
}

/** The parameter keys the findings are about. */
export function paramKeysOf(findings: ReadonlyArray<Pick<Finding, 'subject'>>): ParamKey[] {
  const keys = new Map<string, ParamKey>();
  for (const finding of findings) {
    const { event, param } = finding.subject;
    if (event !== undefined && param !== undefined) keys.set(`${event}\u0000${param}`, { event, key: param });
  }
  return [...keys.values()];
}

/**
 * Values of a key are shown only when every profile of it over [from, to] had
 * at most LOW_CARDINALITY distinct values (the rollup's own limit for profiling
 * values); a key without a profile shows none.
 */
export async function loadValuePolicy(db: Db, schema: string, hideValues: boolean, keys: ParamKey[], from: Day, to: Day): Promise<ValuePolicy> {
  if (hideValues) return HIDE_ALL_VALUES;
  if (keys.length === 0) return { visible: () => false };
  const { rows } = await db.query<{ event: string; key: string }>({
    text: `select p.event, p.key from ${quoteIdent(schema)}.param_days p
      join unnest($3::text[], $4::text[]) as k(event, key) on k.event = p.event and k.key = p.key
      where p.day between $1 and $2
      group by p.event, p.key
      having bool_and(p.distinct_values is not null and p.distinct_values <= $5)`,
    values: [from, to, keys.map((k) => k.event), keys.map((k) => k.key), LOW_CARDINALITY],
  });
  const allowed = new Set(rows.map((row) => `${row.event}\u0000${row.key}`));
  return { visible: (event, key) => allowed.has(`${event}\u0000${key}`) };
}

/** Whether the findings' own text may be shown: none of them is about a key whose values are hidden. */
export function valuesShown(policy: ValuePolicy, findings: ReadonlyArray<Pick<Finding, 'subject'>>): boolean {
  return paramKeysOf(findings).every(({ event, key }) => policy.visible(event, key));
}

/** A parameter value as shown: cleaned and truncated. */
export function showValue(value: string): string {
  return cleanText(value, VALUE_MAX_CHARS);
}
