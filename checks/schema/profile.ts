/**
 * The observed parameter profile of each watched event, per platform, app
 * version and day, rebuilt from the rollup rows: how many events the version
 * sent, and per key how many of them carried it with which JSON type.
 *
 * Missing and zero: a version with no row on a day did not send the event that
 * day (no cell: unknown, never a zero rate). A key with no row on a day the
 * version did send the event was carried by 0 events: a real zero, since the
 * rollup profiles every key of every watched event.
 */
import { ALL_VERSIONS, type CheckInput, type Day, type ParamDayRow } from '../types.js';

export interface KeyDay {
  /** Events carrying the key, whatever its JSON type (JSON null included). */
  events: number;
  /** The profile rows of the key by JSON type (`jsonb_typeof`). */
  types: Map<string, ParamDayRow>;
  /** `valueCounts` once computed: references read the same cells many times. */
  values?: Map<string, number> | null;
}

export interface VersionDay {
  /** Events of the event on this platform and version that day. */
  total: number;
  keys: Map<string, KeyDay>;
}

/** Version -> profile, for one event, platform and day. */
export type DayProfile = Map<string, VersionDay>;

export interface EventPlatform {
  event: string;
  platform: string;
  days: Map<Day, DayProfile>;
}

/** JSON types whose values the rollup profiles. */
export const SCALAR_TYPES: ReadonlySet<string> = new Set(['string', 'number', 'boolean']);

/** Profiles of the watched events from day `from` on. */
export function buildProfiles(input: CheckInput, from: Day): EventPlatform[] {
  const watched = new Set(input.flow.events);
  const profiles = new Map<string, EventPlatform>();
  const versionDay = (event: string, platform: string, day: Day, version: string): VersionDay => {
    const id = `${event}\u0000${platform}`;
    let profile = profiles.get(id);
    if (!profile) profiles.set(id, (profile = { event, platform, days: new Map() }));
    let versions = profile.days.get(day);
    if (!versions) profile.days.set(day, (versions = new Map()));
    let cell = versions.get(version);
    if (!cell) versions.set(version, (cell = { total: 0, keys: new Map() }));
    return cell;
  };
  for (const row of input.events) {
    if (row.day < from || row.dimension !== '' || row.version === ALL_VERSIONS || !watched.has(row.event)) continue;
    versionDay(row.event, row.platform, row.day, row.version).total = row.events;
  }
  for (const row of input.params) {
    if (row.day < from || row.version === ALL_VERSIONS || !watched.has(row.event)) continue;
    const cell = versionDay(row.event, row.platform, row.day, row.version);
    // Both totals come from the same event counts; the larger guards against a count row missing.
    cell.total = Math.max(cell.total, row.eventTotal);
    let key = cell.keys.get(row.key);
    if (!key) cell.keys.set(row.key, (key = { events: 0, types: new Map() }));
    key.events += row.events;
    key.types.set(row.jsonType, row);
  }
  return [...profiles.values()].sort((a, b) => (a.event === b.event ? a.platform.localeCompare(b.platform) : a.event.localeCompare(b.event)));
}

/** Events carrying `key` as JSON null. */
export function nullEvents(day: VersionDay, key: string): number {
  return day.keys.get(key)?.types.get('null')?.events ?? 0;
}

/** A value as profiled: its JSON type and its text (cut by the rollup). */
export interface ProfiledValue {
  type: string;
  value: string;
}

export function valueId(type: string, value: string): string {
  return `${type}\u0000${value}`;
}

export function parseValueId(id: string): ProfiledValue {
  const cut = id.indexOf('\u0000');
  return { type: id.slice(0, cut), value: id.slice(cut + 1) };
}

/**
 * Events per value (by `valueId`) of a key on one version-day, or null when
 * the profile does not list every value (too many distinct values, or a key
 * whose values the rollup no longer groups).
 */
export function valueCounts(day: VersionDay, key: string): Map<string, number> | null {
  const stats = day.keys.get(key);
  if (!stats) return new Map();
  if (stats.values !== undefined) return stats.values;
  const counts = new Map<string, number>();
  stats.values = counts;
  for (const [type, row] of stats.types) {
    if (!SCALAR_TYPES.has(type)) continue;
    if (row.distinctValues === null || row.topValues.length < row.distinctValues) return (stats.values = null);
    for (const top of row.topValues) {
      const id = valueId(type, top.value);
      counts.set(id, (counts.get(id) ?? 0) + top.events);
    }
  }
  return counts;
}

/** Events carrying the key with a profiled (scalar) type: the denominator of value shares. */
export function scalarEvents(day: VersionDay, key: string): number {
  let events = 0;
  for (const [type, row] of day.keys.get(key)?.types ?? []) if (SCALAR_TYPES.has(type)) events += row.events;
  return events;
}
