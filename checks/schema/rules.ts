/**
 * The rules of the `schema` check for one event on one platform, as drafts of
 * findings: (a) the declared contract, (b) observed drift against recent days,
 * and the rename pairing that turns "a key vanished" plus "a key appeared" in
 * the same versions into one finding.
 */
import { twoProportionZ, wilson } from '../stats/index.js';
import type { ParamContract } from '../types.js';
import { SCALAR_TYPES, nullEvents, parseValueId, scalarEvents, valueCounts, type VersionDay } from './profile.js';
import { MIN_REFERENCE_DAYS, type EventScope, type Family, type Measure, type Verdict } from './scope.js';

export type Kind =
  | 'missing_required'
  | 'wrong_type'
  | 'unexpected_null'
  | 'outside_enum'
  | 'out_of_range'
  | 'undeclared_key'
  | 'renamed'
  | 'new_key'
  | 'vanished_key'
  | 'null_rate'
  | 'type_shift'
  | 'new_value'
  | 'vanished_value';

/** Which severity option a kind follows: contract breaks and lossy drift, new keys, new values, values of step keys. */
export type Loudness = 'break' | 'params' | 'values' | 'steps';

export interface Draft {
  kind: Kind;
  key: string;
  family: Family;
  /** The version the finding is about, null for the whole platform. */
  version: string | null;
  /** The versions pooled into the verdict. */
  versions: string[];
  verdict: Verdict;
  /** The measure behind the verdict, for the finding's excerpt. */
  measure: Measure;
  /** A day's value for the excerpt when it is not the measure's share (the range's extreme number). */
  daily?: (day: string, include: (version: string) => boolean) => number;
  loudness: Loudness;
  /** Message values particular to the kind. */
  details: Record<string, string>;
}

/** A vanished value must have been expected at least this often for its absence to mean something (P(0) = e^-10 under Poisson). */
const ABSENT_EXPECTED = 10;
/** A renamed key carries between half and twice the events the old key lost. */
const RENAME_RATIO = 2;
/** Share of the new key's values that the old key used to have, when both are profiled. */
const RENAME_VALUE_OVERLAP = 0.5;
/** Values shown in a message, each cut to a readable length. */
const SHOWN_VALUES = 3;
const VALUE_LENGTH = 24;

const presence =
  (key: string): Measure =>
  (day) => ({ x: day.keys.get(key)?.events ?? 0, n: day.total });

/** The JSON type a declared contract type arrives as. */
const jsonTypeOf = (type: ParamContract['type']): string => (type === 'integer' ? 'number' : type);

export function contractDrafts(scope: EventScope, contract: Record<string, ParamContract>): Draft[] {
  const drafts: Draft[] = [];
  const add = (kind: Kind, key: string, family: Family, measure: Measure, details: (versions: readonly string[]) => Record<string, string>) => {
    for (const place of scope.localise((versions, floor) => scope.judgeShare(versions, measure, floor))) {
      drafts.push({ kind, key, family, ...place, measure, loudness: 'break', details: details(place.versions) });
    }
  };
  for (const [key, rule] of Object.entries(contract)) {
    if (rule.required) {
      add('missing_required', key, 'presence', (day) => ({ x: Math.max(0, day.total - (day.keys.get(key)?.events ?? 0)), n: day.total }), () => ({}));
    }
    const expectedType = jsonTypeOf(rule.type);
    add('wrong_type', key, 'type', (day) => ({ x: wrongTypeEvents(day, key, rule.type), n: day.total }), (versions) => ({
      type: rule.type,
      found: wrongTypesFound(scope, versions, key, rule.type, expectedType),
    }));
    if (!rule.nullable) add('unexpected_null', key, 'null', (day) => ({ x: nullEvents(day, key), n: day.total }), () => ({}));
    if (rule.enum) {
      const allowed = rule.enum;
      add('outside_enum', key, 'values', (day) => ({ x: outsideEnum(day, key, allowed).events, n: day.total }), (versions) => ({
        values: describeOutside(scope, versions, key, allowed),
        allowed: listValues(allowed.map(String)),
      }));
    }
    if (rule.min !== undefined || rule.max !== undefined) drafts.push(...rangeDrafts(scope, key, rule));
  }
  return drafts;
}

function wrongTypeEvents(day: VersionDay, key: string, type: ParamContract['type']): number {
  let events = 0;
  for (const [jsonType, row] of day.keys.get(key)?.types ?? []) {
    if (jsonType === 'null') continue; // nulls are the nullable rule's business
    if (jsonType !== jsonTypeOf(type)) events += row.events;
    else if (type === 'integer') events += row.fractional;
  }
  return events;
}

function wrongTypesFound(scope: EventScope, versions: readonly string[], key: string, type: ParamContract['type'], expected: string): string {
  const found = new Set<string>();
  for (const version of versions) {
    for (const [jsonType, row] of scope.today.get(version)?.keys.get(key)?.types ?? []) {
      if (jsonType !== 'null' && jsonType !== expected && row.events > 0) found.add(jsonType);
      if (jsonType === 'number' && type === 'integer' && row.fractional > 0) found.add('number with a fraction');
    }
  }
  return [...found].sort().join(', ');
}

const inEnum = (allowed: ReadonlyArray<string | number | boolean>, type: string, value: string) =>
  allowed.some((entry) => String(entry) === value || (type === 'number' && typeof entry === 'number' && Number(value) === entry));

/**
 * Events outside the enum on one version-day: exact for listed values; when
 * the profile lists only some values, each unlisted one beyond the enum
 * entries not seen counts as at least one event (a lower bound).
 */
function outsideEnum(day: VersionDay, key: string, allowed: ReadonlyArray<string | number | boolean>): { events: number; values: string[]; unlisted: number; unprofiled: boolean } {
  const out = { events: 0, values: [] as string[], unlisted: 0, unprofiled: false };
  for (const [type, row] of day.keys.get(key)?.types ?? []) {
    if (!SCALAR_TYPES.has(type)) continue;
    if (row.distinctValues === null) {
      out.unprofiled = true;
      continue;
    }
    for (const top of row.topValues) {
      if (inEnum(allowed, type, top.value)) continue;
      out.events += top.events;
      out.values.push(top.value);
    }
    const unlistedValues = row.distinctValues - row.topValues.length;
    if (unlistedValues > 0) {
      const unseenAllowed = allowed.filter((entry) => !row.topValues.some((top) => inEnum([entry], type, top.value))).length;
      const beyond = Math.max(0, unlistedValues - unseenAllowed);
      out.events += beyond;
      out.unlisted += beyond;
    }
  }
  return out;
}

function describeOutside(scope: EventScope, versions: readonly string[], key: string, allowed: ReadonlyArray<string | number | boolean>): string {
  const values = new Set<string>();
  let unlisted = 0;
  let unprofiled = false;
  for (const version of versions) {
    const day = scope.today.get(version);
    if (!day) continue;
    const outside = outsideEnum(day, key, allowed);
    for (const value of outside.values) values.add(value);
    unlisted += outside.unlisted;
    unprofiled ||= outside.unprofiled;
  }
  const parts = [listValues([...values].sort(), scope.input.hideValues)].filter((part) => part !== '');
  if (unlisted > 0) parts.push(`at least ${unlisted} more not listed by the profile`);
  if (unprofiled) parts.push('some versions too varied to profile');
  return parts.join('; ');
}

/** Numbers outside the declared [min, max]: the profile knows each version's smallest and largest number. */
function rangeDrafts(scope: EventScope, key: string, rule: ParamContract): Draft[] {
  const extremes = (day: string, include: (version: string) => boolean) => {
    let smallest = Infinity;
    let largest = -Infinity;
    for (const [version, profile] of scope.profile.days.get(day) ?? []) {
      const row = include(version) ? profile.keys.get(key)?.types.get('number') : undefined;
      if (row?.minNumber != null) smallest = Math.min(smallest, row.minNumber);
      if (row?.maxNumber != null) largest = Math.max(largest, row.maxNumber);
    }
    return { smallest, largest };
  };
  const judge = (versions: readonly string[], floor: boolean): Verdict | null => {
    const events = scope.poolToday(versions, (day) => ({ x: 0, n: day.total })).n;
    if (events < (floor ? scope.options.min_events : 1)) return null;
    const { smallest, largest } = extremes(scope.input.day, (version) => versions.includes(version));
    if (smallest === Infinity) return null;
    const low = rule.min ?? smallest;
    const high = rule.max ?? largest;
    // Distance beyond the bound in units of the declared range (or of the bound's size when one-sided).
    const width = rule.min !== undefined && rule.max !== undefined ? rule.max - rule.min : Math.abs(rule.min ?? rule.max ?? 0);
    const unit = width > 0 ? width : 1;
    const under = rule.min !== undefined && smallest < rule.min ? (rule.min - smallest) / unit : 0;
    const over = rule.max !== undefined && largest > rule.max ? (largest - rule.max) / unit : 0;
    return {
      flagged: under > 0 || over > 0,
      cell: { x: 0, n: events },
      observed: over >= under ? largest : smallest,
      expected: { low, high, center: (low + high) / 2 },
      score: Math.max(under, over),
      direction: over >= under ? 'up' : 'down',
      evidence: { min_number: smallest, max_number: largest, contract_min: rule.min ?? null, contract_max: rule.max ?? null, events },
    };
  };
  return scope.localise(judge).map((place) => {
    const side = place.verdict.direction === 'up' ? 'largest' : 'smallest';
    const daily = (day: string, include: (version: string) => boolean) => {
      const value = extremes(day, include)[side];
      return Number.isFinite(value) ? value : Number.NaN;
    };
    return {
      kind: 'out_of_range' as const,
      key,
      family: 'range' as const,
      ...place,
      measure: (day: VersionDay) => ({ x: 0, n: day.total }),
      daily,
      loudness: 'break' as const,
      details: {
        min: String(place.verdict.evidence.min_number),
        max: String(place.verdict.evidence.max_number),
        range: `${rule.min ?? '-inf'} to ${rule.max ?? 'inf'}`,
      },
    };
  });
}

/** Keys of an event that a contract with at least one declared key does not declare. */
export function undeclaredDrafts(scope: EventScope, contract: Record<string, ParamContract>): Draft[] {
  const drafts: Draft[] = [];
  for (const key of keysOn(scope, [scope.input.day])) {
    if (key in contract) continue;
    const measure = presence(key);
    for (const place of scope.localise((versions, floor) => scope.judgeShare(versions, measure, floor))) {
      drafts.push({ kind: 'undeclared_key', key, family: 'presence', ...place, measure, loudness: 'params', details: {} });
    }
  }
  return drafts;
}

/** Keys carried by any version on any of the days. */
function keysOn(scope: EventScope, days: readonly string[]): Set<string> {
  const keys = new Set<string>();
  for (const day of days) for (const profile of scope.profile.days.get(day)?.values() ?? []) for (const [key, stats] of profile.keys) if (stats.events > 0) keys.add(key);
  return keys;
}

/** The JSON type (null left aside) carrying most events of a key over the days and versions. */
function dominantType(scope: EventScope, key: string, days: readonly string[], include: (version: string) => boolean = () => true): string | null {
  const totals = new Map<string, number>();
  for (const day of days) {
    for (const [version, profile] of scope.profile.days.get(day) ?? []) {
      if (!include(version)) continue;
      for (const [type, row] of profile.keys.get(key)?.types ?? []) if (type !== 'null') totals.set(type, (totals.get(type) ?? 0) + row.events);
    }
  }
  let best: string | null = null;
  for (const [type, events] of totals) if (events > 0 && (best === null || events > totals.get(best)!)) best = type;
  return best;
}

/** Every value of a key over the days (all versions), or null when some cell's profile is incomplete. */
function valuesOver(scope: EventScope, key: string, days: readonly string[], include: (version: string) => boolean = () => true): Set<string> | null {
  const values = new Set<string>();
  for (const day of days) {
    for (const [version, profile] of scope.profile.days.get(day) ?? []) {
      if (!include(version) || !profile.keys.has(key)) continue;
      const counts = valueCounts(profile, key);
      if (counts === null) return null;
      for (const [id, events] of counts) if (events > 0) values.add(id);
    }
  }
  return values;
}

export interface DriftRules {
  contract: Record<string, ParamContract> | undefined;
  /** Keys whose values define flow steps: their values are the step counts' business unless `stepValues`. */
  stepKeys: ReadonlySet<string>;
  stepValues: boolean;
  newKeys: boolean;
  newValues: boolean;
}

export function driftDrafts(scope: EventScope, rules: DriftRules): Draft[] {
  const drafts: Draft[] = [];
  const { contract } = rules;
  const pastKeys = keysOn(scope, scope.past);
  // An event the platform never sent on the recent days is seen for the first time: its keys and values are its baseline.
  const seenBefore = scope.past.some((day) => (scope.profile.days.get(day)?.size ?? 0) > 0);
  const todayKeys = keysOn(scope, [scope.input.day]);
  type Judge = (versions: readonly string[], floor: boolean) => Verdict | null;
  type Details = (versions: readonly string[]) => Record<string, string>;
  const push = (kind: Kind, key: string, family: Family, measure: Measure, loudness: Loudness, judge: Judge, details: Details = () => ({})) => {
    for (const place of scope.localise(judge)) drafts.push({ kind, key, family, ...place, measure, loudness, details: details(place.versions) });
  };

  for (const key of pastKeys) {
    const rule = contract?.[key];
    if (!rule?.required) {
      const measure = presence(key);
      push('vanished_key', key, 'presence', measure, 'break', (versions, floor) => scope.judgeRate(versions, measure, scope.excluder('presence', key), 'down', floor));
    }
  }
  for (const key of new Set([...pastKeys, ...todayKeys])) {
    const rule = contract?.[key];
    if (!rule || rule.nullable) {
      const measure: Measure = (day) => ({ x: nullEvents(day, key), n: day.keys.get(key)?.events ?? 0 });
      push('null_rate', key, 'null', measure, 'break', (versions, floor) => scope.judgeRate(versions, measure, scope.excluder('null', key), 'up', floor));
    }
    const usual = dominantType(scope, key, scope.past);
    if (!rule && usual !== null) {
      const measure: Measure = (day) => {
        const stats = day.keys.get(key);
        const nonNull = (stats?.events ?? 0) - nullEvents(day, key);
        return { x: nonNull - (stats?.types.get(usual)?.events ?? 0), n: nonNull };
      };
      push('type_shift', key, 'type', measure, 'break', (versions, floor) => scope.judgeRate(versions, measure, scope.excluder('type', key), 'up', floor), (versions) => ({
        usual,
        found: dominantType(scope, key, [scope.input.day], (version) => versions.includes(version)) ?? usual,
      }));
    }
  }
  if (rules.newKeys && seenBefore) {
    for (const key of todayKeys) {
      const measure = presence(key);
      if (notableBefore(scope, measure)) continue;
      push('new_key', key, 'presence', measure, 'params', (versions, floor) => newVerdict(scope.judgeShare(versions, measure, floor)));
    }
  }
  for (const key of new Set([...pastKeys, ...todayKeys])) {
    const stepKey = rules.stepKeys.has(key);
    if (stepKey && !rules.stepValues) continue;
    const past = valuesOver(scope, key, scope.past);
    const today = valuesOver(scope, key, [scope.input.day]);
    if (past === null || today === null) continue;
    drafts.push(...vanishedValues(scope, key, past, stepKey ? 'steps' : 'break'));
    const fresh = [...today].filter((id) => !notableBefore(scope, (day) => ({ x: valueCounts(day, key)?.get(id) ?? 0, n: scalarEvents(day, key) })));
    if ((stepKey || rules.newValues) && seenBefore && !contract?.[key]?.enum && fresh.length > 0 && past.size > 0) {
      const measure: Measure = (day) => {
        const counts = valueCounts(day, key);
        return { x: fresh.reduce((sum, id) => sum + (counts?.get(id) ?? 0), 0), n: scalarEvents(day, key) };
      };
      push('new_value', key, 'values', measure, stepKey ? 'steps' : 'values', (versions, floor) => newVerdict(scope.judgeShare(versions, measure, floor)), (versions) => ({
        values: listValues(
          fresh.filter((id) => sentToday(scope, versions, key, id)).map((id) => parseValueId(id).value),
          scope.input.hideValues,
        ),
      }));
    }
  }
  return drafts;
}

/**
 * Whether the platform sent something in a notable amount (the contract
 * share test: Wilson lower bound above the tolerance) on some recent day. A
 * key or value that was not is new; a stray test event does not make it known.
 */
function notableBefore(scope: EventScope, measure: Measure): boolean {
  return scope.past.some((day) => {
    const cell = scope.pool(day, () => true, measure);
    return cell.x > 0 && wilson(Math.min(cell.x, cell.n), cell.n).low > scope.options.tolerance;
  });
}

function sentToday(scope: EventScope, versions: readonly string[], key: string, id: string): boolean {
  return versions.some((version) => (valueCounts(scope.today.get(version) ?? { total: 0, keys: new Map() }, key)?.get(id) ?? 0) > 0);
}

/** A key or value never seen before was expected at 0: the verdict of its share, restated as a rise from nothing. */
function newVerdict(verdict: Verdict | null): Verdict | null {
  return verdict && { ...verdict, expected: { low: 0, high: 0, center: 0 }, direction: 'up' };
}

/**
 * Values of a low-cardinality key that stopped arriving: 0 events where the
 * reference share predicts at least ABSENT_EXPECTED. One draft per key and
 * place, listing every vanished value.
 */
function vanishedValues(scope: EventScope, key: string, past: ReadonlySet<string>, loudness: Loudness): Draft[] {
  const excluded = scope.excluder('values', key);
  const byPlace = new Map<string, Draft>();
  for (const id of past) {
    const measure: Measure = (day) => ({ x: valueCounts(day, key)?.get(id) ?? 0, n: scalarEvents(day, key) });
    const judge = (versions: readonly string[], floor: boolean): Verdict | null => {
      const cell = scope.poolToday(versions, measure);
      if (cell.n < (floor ? scope.options.min_events : 1)) return null;
      const reference = scope.reference(versions, measure, excluded);
      if (!reference) return null;
      const center = reference.x / reference.n;
      const expectedEvents = center * cell.n;
      const { z } = twoProportionZ(cell.x, cell.n, reference.x, reference.n);
      // The shares a day of this size would plausibly show at the reference share.
      const plausible = wilson(Math.round(expectedEvents), cell.n);
      return {
        flagged: cell.x === 0 && expectedEvents >= ABSENT_EXPECTED && center >= scope.options.tolerance,
        cell,
        observed: cell.x / cell.n,
        expected: { low: plausible.low, high: plausible.high, center },
        score: z,
        direction: 'down',
        evidence: { events: cell.x, of: cell.n, expected_events: expectedEvents, reference_days: reference.days, reference: reference.source },
      };
    };
    for (const place of scope.localise(judge)) {
      const placeId = place.version ?? '\u0000platform';
      const existing = byPlace.get(placeId);
      const value = parseValueId(id).value;
      if (existing) {
        existing.details.values = `${existing.details.values}\u0000${value}`;
        if (place.verdict.expected.center > existing.verdict.expected.center) Object.assign(existing, { verdict: place.verdict, measure });
      } else {
        byPlace.set(placeId, { kind: 'vanished_value', key, family: 'values', ...place, measure, loudness, details: { values: value } });
      }
    }
  }
  return [...byPlace.values()].map((draft) => {
    const values = draft.details.values!.split('\u0000').sort();
    return { ...draft, details: { values: listValues(values, scope.input.hideValues), expected_count: String(Math.round(draft.verdict.expected.center * draft.verdict.cell.n)) } };
  });
}

/**
 * "ios 5.2.0 sends `zone` instead of `fare_zone`": a key lost in some versions
 * (missing although required, or vanished) and a key that appeared in the
 * same versions, carried by about as many events (half to twice), with the
 * same JSON type and, when both are profiled, mostly the same values. The pair
 * becomes one `renamed` finding; the new key's own findings there are dropped.
 */
export function pairRenames(scope: EventScope, drafts: Draft[]): Draft[] {
  const out = [...drafts];
  for (const lost of drafts) {
    if (lost.kind !== 'missing_required' && lost.kind !== 'vanished_key') continue;
    const { cell } = lost.verdict;
    const lostEvents = lost.kind === 'missing_required' ? cell.x : (lost.verdict.expected.center - lost.verdict.observed) * cell.n;
    if (lostEvents <= 0) continue;
    const inPlace = (version: string) => lost.versions.includes(version);
    const oldType = dominantType(scope, lost.key, scope.past);
    const oldValues = valuesOver(scope, lost.key, scope.past);
    const excluded = scope.excluder('presence', lost.key);
    let best: { key: string; gained: number; overlap: number; distance: number } | null = null;
    for (const key of keysOn(scope, [scope.input.day])) {
      if (key === lost.key) continue;
      const measure = presence(key);
      const gained = scope.poolToday(lost.versions, measure).x;
      const ratio = gained / lostEvents;
      if (ratio < 1 / RENAME_RATIO || ratio > RENAME_RATIO) continue;
      if (wilson(Math.min(gained, cell.n), cell.n).low <= scope.options.tolerance) continue;
      if (dominantType(scope, key, [scope.input.day], inPlace) !== oldType) continue;
      // The new key must be new here: rare or absent in these versions' reference, judged before the loss began.
      const reference = scope.reference(lost.versions, measure, excluded);
      if (!reference || reference.x / reference.n >= scope.options.tolerance) continue;
      const newValues = valuesOver(scope, key, [scope.input.day], inPlace);
      let overlap = 1;
      if (oldValues && newValues && oldValues.size > 0 && newValues.size > 0) {
        overlap = [...newValues].filter((id) => oldValues.has(id)).length / newValues.size;
        if (overlap < RENAME_VALUE_OVERLAP) continue;
      }
      const distance = Math.abs(Math.log(ratio));
      if (!best || overlap > best.overlap || (overlap === best.overlap && distance < best.distance)) best = { key, gained, overlap, distance };
    }
    if (!best) continue;
    const newKey = best.key;
    const kept = scope.poolToday(lost.versions, presence(lost.key)).x;
    const expected =
      lost.kind === 'vanished_key' ? lost.verdict.expected : { low: 1 - scope.options.tolerance, high: 1, center: 1 };
    const renamed: Draft = {
      ...lost,
      kind: 'renamed',
      measure: presence(lost.key),
      verdict: {
        ...lost.verdict,
        observed: kept / cell.n,
        expected,
        score: Math.min(lostEvents, best.gained) / cell.n,
        direction: 'down',
        evidence: { ...lost.verdict.evidence, new_key: newKey, new_key_events: best.gained, old_key_events: kept, value_overlap: best.overlap },
      },
      details: { new_key: newKey, new_count: String(best.gained), old_count: String(kept) },
    };
    out.splice(out.indexOf(lost), 1, renamed);
    for (let i = out.length - 1; i >= 0; i--) {
      const draft = out[i]!;
      if (draft.key === newKey && draft.version === lost.version && (draft.kind === 'new_key' || draft.kind === 'undeclared_key')) out.splice(i, 1);
    }
  }
  return out;
}

/**
 * One account per key and place: value drift is left out where another
 * finding already explains the key there (a vanished or renamed key, a type
 * change, a contract break), since the values would only echo it.
 */
export function dropEchoes(drafts: Draft[]): Draft[] {
  const explained = new Set(drafts.filter((d) => d.family !== 'values' || d.kind === 'outside_enum').map((d) => `${d.key}\u0000${d.version}`));
  return drafts.filter((d) => !((d.kind === 'vanished_value' || d.kind === 'new_value') && explained.has(`${d.key}\u0000${d.version}`)));
}

/**
 * Values are news only for a key the platform has sent for a while: a key
 * seen on fewer than MIN_REFERENCE_DAYS of the recent days (a key a release
 * just renamed or added) is still showing its values, and a new or vanished
 * one is part of the key's arrival, already reported.
 */
export function dropYoungKeyValues(scope: EventScope, drafts: Draft[]): Draft[] {
  const young = new Map<string, boolean>();
  const isYoung = (key: string) => {
    if (!young.has(key)) {
      const days = scope.past.filter((day) => {
        const cell = scope.pool(day, () => true, presence(key));
        return cell.x > 0 && wilson(Math.min(cell.x, cell.n), cell.n).low > scope.options.tolerance;
      }).length;
      young.set(key, days < MIN_REFERENCE_DAYS);
    }
    return young.get(key)!;
  };
  return drafts.filter((d) => !((d.kind === 'new_value' || d.kind === 'vanished_value') && isYoung(d.key)));
}

/** Up to SHOWN_VALUES values, each cut to VALUE_LENGTH characters, and how many more. */
export function listValues(values: readonly string[], hide = false): string {
  // With delivery.hide_values, data values are counted, never quoted.
  if (hide) return values.length === 0 ? '' : `${values.length} value${values.length === 1 ? '' : 's'} (hidden by configuration)`;
  const shown = values.slice(0, SHOWN_VALUES).map((value) => (value.length > VALUE_LENGTH ? `${value.slice(0, VALUE_LENGTH - 1)}…` : value));
  const more = values.length - shown.length;
  return more > 0 ? `${shown.join(', ')} and ${more} more` : shown.join(', ');
}

