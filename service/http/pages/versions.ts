/**
 * The per-version split of an incident blamed on a release: the symptom's
 * measure for each app version of the platform over the incident's days,
 * read from the rollups. Versions on the same platform and days share the
 * calendar and the traffic mix, so the blamed version against the others is
 * the natural comparison the cause analysis also makes.
 */
import { ALL_VERSIONS, type Day, type FlowDefinition, type Finding } from '../../../checks/types.js';
import { addDays } from '../../../checks/time.js';
import type { Db } from '../../db/sql.js';
import { measureOf, type FindingMeasure } from '../../../checks/causes/measures.js';
import { splitQuery, type SplitRow } from './queries.js';

/** Longest stretch of days the split covers (the newest ones of a long incident). */
export const SPLIT_MAX_DAYS = 28;
/** Versions listed one by one; smaller ones are summed into one row. */
const VERSIONS_LISTED = 12;

export interface Ratio {
  num: number;
  den: number;
}

export interface VersionSplit {
  platform: string;
  /** The blamed version. */
  version: string;
  from: Day;
  to: Day;
  /** Words for the measure and its two parts (plain text with client data: escape). */
  labels: { measure: string; num: string; den: string; percent: boolean };
  /** Per version over the days, largest denominators first. */
  versions: Array<{ version: string; ratio: Ratio }>;
  /** Versions summed into one row because they were small. */
  others: { count: number; ratio: Ratio } | null;
  /** Every version except the blamed one. */
  rest: Ratio;
  /** The platform total (all versions). */
  total: Ratio;
  /** Per day: the blamed version against the rest. */
  days: Array<{ day: Day; blamed: Ratio; rest: Ratio }>;
}

/** The measure behind a symptom, the one the cause analysis compares versions on; undefined for symptoms without one (freshness, schema). */
export function splitMeasureOf(finding: Finding, flow: FlowDefinition): { measure: FindingMeasure; labels: VersionSplit['labels'] } | undefined {
  const measure = measureOf(finding, flow);
  if (!measure) return undefined;
  const steps = flow.steps.map((step) => step.name);
  const first = steps[0]!;
  switch (measure.kind) {
    case 'flow_conversion':
      return { measure, labels: { measure: measure.label, den: `people entering at ${first}`, num: `people completing at ${steps[steps.length - 1]}`, percent: true } };
    case 'step_conversion':
      return { measure, labels: { measure: measure.label, den: `people at ${steps[measure.step - 1]}`, num: `people at ${steps[measure.step]}`, percent: true } };
    case 'step_people':
      return { measure, labels: { measure: `${measure.label} per person at ${first} (any order)`, den: `people at ${first}`, num: `people at ${steps[measure.step]}`, percent: true } };
    case 'event_people':
      return { measure, labels: { measure: `${measure.label} per person at ${first}`, den: `people at ${first}`, num: measure.label, percent: true } };
    case 'events_per_person':
      return { measure, labels: { measure: measure.label, den: `people sending ${measure.event}`, num: `${measure.event} events`, percent: false } };
  }
}

const add = (a: Ratio, b: Ratio): Ratio => ({ num: a.num + b.num, den: a.den + b.den });
const ZERO: Ratio = { num: 0, den: 0 };

export function rateOf(ratio: Ratio): number | null {
  return ratio.den > 0 ? ratio.num / ratio.den : null;
}

/** Newest first by version number ("7.10.0" after "7.9.1"), then the version-less rows. */
function byVersionDesc(a: string, b: string): number {
  return b.localeCompare(a, 'en', { numeric: true });
}

/** The split, or why there is none (plain text). */
export type SplitResult = { split: VersionSplit } | { missing: string };

/** The split for the first symptom (in ranked order) that has a per-version measure. */
export async function loadVersionSplit(
  db: Db,
  schema: string,
  o: { flow: FlowDefinition; platform: string; version: string; symptoms: readonly Finding[]; since: Day; lastSeen: Day },
): Promise<SplitResult> {
  const chosen = o.symptoms.map((finding) => splitMeasureOf(finding, o.flow)).find((m) => m !== undefined);
  if (!chosen) return { missing: 'its symptoms have no per-version measure (parameter and freshness findings have none)' };
  const earliest = addDays(o.lastSeen, -(SPLIT_MAX_DAYS - 1));
  const from = o.since > earliest ? o.since : earliest;
  const { rows } = await db.query<SplitRow>(splitQuery(schema, { flow: o.flow.id, lastStep: o.flow.steps.length - 1, platform: o.platform, measure: chosen.measure, anyStepEntry: o.flow.entry === 'any_step', from, to: o.lastSeen }));
  if (rows.length === 0) return { missing: `the rollups hold no ${o.platform} rows for ${chosen.labels.measure} from ${from} to ${o.lastSeen}` };

  const perVersion = new Map<string, Ratio>();
  let total = ZERO;
  const perDay = new Map<Day, { blamed: Ratio; rest: Ratio }>();
  for (const row of rows) {
    const ratio = { num: row.num, den: row.den };
    if (row.version === ALL_VERSIONS) {
      total = add(total, ratio);
      continue;
    }
    perVersion.set(row.version, add(perVersion.get(row.version) ?? ZERO, ratio));
    const day = perDay.get(row.day) ?? { blamed: ZERO, rest: ZERO };
    perDay.set(row.day, row.version === o.version ? { ...day, blamed: add(day.blamed, ratio) } : { ...day, rest: add(day.rest, ratio) });
  }
  const ranked = [...perVersion].sort(([va, a], [vb, b]) => Number(vb === o.version) - Number(va === o.version) || b.den - a.den || byVersionDesc(va, vb));
  const listed = ranked.slice(0, VERSIONS_LISTED).sort(([a], [b]) => byVersionDesc(a, b));
  const small = ranked.slice(VERSIONS_LISTED);
  const split: VersionSplit = {
    platform: o.platform,
    version: o.version,
    from,
    to: o.lastSeen,
    labels: chosen.labels,
    versions: listed.map(([version, ratio]) => ({ version, ratio })),
    others: small.length === 0 ? null : { count: small.length, ratio: small.reduce((sum, [, r]) => add(sum, r), ZERO) },
    rest: ranked.filter(([v]) => v !== o.version).reduce((sum, [, r]) => add(sum, r), ZERO),
    total,
    days: [...perDay].sort(([a], [b]) => a.localeCompare(b)).map(([day, parts]) => ({ day, ...parts })),
  };
  return { split };
}
