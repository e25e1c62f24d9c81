/**
 * The per-version split of an incident blamed on a release: the symptom's
 * measure for each app version of the platform over the incident's days,
 * read from the rollups. Versions on the same platform and days share the
 * calendar and the traffic mix, so the blamed version against the others is
 * the natural comparison the cause analysis also makes.
 */
import { ALL_VERSIONS, type Day, type FlowDefinition, type Finding } from '../../../checks/types.js';
import { addDays } from '../../../checks/time.js';
import type { Db } from '../../incidents/store.js';
import { splitQuery, type SplitMeasure, type SplitRow } from './queries.js';

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

/** The measure behind a symptom, chosen as the cause analysis chooses it; undefined for symptoms without one (freshness, schema). */
export function splitMeasureOf(finding: Finding, flow: FlowDefinition): { measure: SplitMeasure; labels: VersionSplit['labels'] } | undefined {
  const { subject, metric } = finding;
  const steps = flow.steps.map((step) => step.name);
  const last = steps.length - 1;
  const isConversion = /conversion|ratio|share/.test(metric);
  const completion = { measure: { kind: 'flow_conversion' as const, last }, labels: { measure: 'flow completion', den: `people entering at ${steps[0]}`, num: `people completing at ${steps[last]}`, percent: true } };
  if (subject.type === 'flow') return completion;
  if (subject.type === 'step') {
    const step = steps.indexOf(subject.step ?? subject.name);
    if (step < 0) return undefined;
    if (step === 0) return completion;
    const name = steps[step]!;
    if (isConversion) {
      return { measure: { kind: 'step_conversion', step }, labels: { measure: `${steps[step - 1]} -> ${name} conversion`, den: `people at ${steps[step - 1]}`, num: `people at ${name}`, percent: true } };
    }
    return { measure: { kind: 'step_people', step }, labels: { measure: `people at ${name} per person at ${steps[0]} (any order)`, den: `people at ${steps[0]}`, num: `people at ${name}`, percent: true } };
  }
  if (subject.type === 'event') {
    const event = subject.event ?? subject.name;
    if (metric.includes('per_person')) {
      return { measure: { kind: 'events_per_person', event }, labels: { measure: `${event} events per person`, den: `people sending ${event}`, num: `${event} events`, percent: false } };
    }
    return { measure: { kind: 'event_people', event }, labels: { measure: `people sending ${event} per person at ${steps[0]}`, den: `people at ${steps[0]}`, num: `people sending ${event}`, percent: true } };
  }
  return undefined;
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
  const { rows } = await db.query<SplitRow>(splitQuery(schema, { flow: o.flow.id, platform: o.platform, measure: chosen.measure, anyStepEntry: o.flow.entry === 'any_step', from, to: o.lastSeen }));
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
