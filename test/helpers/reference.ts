/**
 * Brute-force TypeScript references for the rollup SQL, written for clarity,
 * not speed: the property tests compare the SQL against them on random data.
 */
import type { FlowDefinition } from '../../checks/types.js';
import type { RawEvent } from './warehouse.js';

export function personOf(event: RawEvent): string | null {
  if (event.user !== null) return `u:${event.user}`;
  if (event.device !== null) return `d:${event.device}`;
  return null;
}

export function platformOf(raw: string, platforms: Record<string, string[]>): string {
  for (const [ours, values] of Object.entries(platforms)) if (values.includes(raw)) return ours;
  return 'other';
}

/** Byte-order comparison, as PostgreSQL's "C" collation. */
export function byteOrder(a: string, b: string): number {
  const x = Buffer.from(a);
  const y = Buffer.from(b);
  return Buffer.compare(x, y);
}

function matchesStep(event: RawEvent, step: FlowDefinition['steps'][number]): boolean {
  if (event.name !== step.event) return false;
  for (const [key, expected] of Object.entries(step.where)) {
    const wanted = (Array.isArray(expected) ? expected : [expected]).map(String);
    const value = event.props?.[key];
    if (value === undefined || value === null || typeof value === 'object') return false;
    if (!wanted.includes(String(value))) return false;
  }
  return true;
}

/** percentile_cont: linear interpolation between closest ranks. */
export function percentileCont(values: number[], p: number): number | null {
  if (values.length === 0) return null;
  const sorted = [...values].sort((a, b) => a - b);
  const position = p * (sorted.length - 1);
  const below = Math.floor(position);
  const above = Math.ceil(position);
  return sorted[below]! + (sorted[above]! - sorted[below]!) * (position - below);
}

export interface ReferenceFunnelRow {
  platform: string;
  version: string;
  dimension: string;
  value: string;
  entered: number[];
  reached: number[];
  secondsMedian: Array<number | null>;
  secondsP90: Array<number | null>;
  timed: number[];
}

interface Path {
  platform: string;
  version: string;
  dims: Record<string, string>;
  entryStep: number;
  times: Array<number | null>;
}

export function referenceFunnel(
  events: RawEvent[],
  flow: FlowDefinition,
  platforms: Record<string, string[]>,
  dimensions: string[],
  lo: Date,
  hi: Date,
): ReferenceFunnelRow[] {
  const windowMs = flow.conversionWindowSeconds * 1000;
  const journeys = new Map<string, Array<{ at: number; step: number; version: string; dims: Record<string, string> }>>();
  for (const event of events) {
    const person = personOf(event);
    const at = event.at.getTime();
    if (person === null || at < lo.getTime() || at >= hi.getTime() + windowMs) continue;
    const platform = platformOf(event.platform, platforms);
    flow.steps.forEach((step, index) => {
      if (!matchesStep(event, step)) return;
      const key = `${person}\u0000${platform}`;
      const dims = Object.fromEntries(dimensions.map((d) => [d, String((event as unknown as Record<string, unknown>)[d] ?? '')]));
      const list = journeys.get(key) ?? [];
      list.push({ at, step: index, version: event.version ?? '', dims });
      journeys.set(key, list);
    });
  }
  const paths: Path[] = [];
  for (const [key, list] of journeys) {
    const platform = key.split('\u0000')[1]!;
    const candidates = list.filter((e) => e.at >= lo.getTime() && e.at < hi.getTime() && (flow.entry === 'any_step' || e.step === 0));
    if (candidates.length === 0) continue;
    const firstAt = Math.min(...candidates.map((e) => e.at));
    const atFirst = candidates.filter((e) => e.at === firstAt);
    const entryStep = Math.min(...atFirst.map((e) => e.step));
    const tied = atFirst.filter((e) => e.step === entryStep);
    const version = tied.map((e) => e.version).sort(byteOrder)[0]!;
    const dims = Object.fromEntries(dimensions.map((d) => [d, tied.map((e) => e.dims[d]!).sort(byteOrder)[0]!]));
    const times: Array<number | null> = flow.steps.map(() => null);
    times[entryStep] = firstAt;
    for (let i = entryStep + 1; i < flow.steps.length; i++) {
      const previous = times[i - 1];
      if (previous === null || previous === undefined) break;
      const next = list.filter((e) => e.step === i && e.at >= previous && e.at <= firstAt + windowMs).map((e) => e.at);
      times[i] = next.length > 0 ? Math.min(...next) : null;
    }
    paths.push({ platform, version, dims, entryStep, times });
  }
  const groups = new Map<string, { row: Omit<ReferenceFunnelRow, 'entered' | 'reached' | 'secondsMedian' | 'secondsP90' | 'timed'>; paths: Path[] }>();
  const add = (platform: string, version: string, dimension: string, value: string, path: Path) => {
    const key = [platform, version, dimension, value].join('\u0000');
    const group = groups.get(key) ?? { row: { platform, version, dimension, value }, paths: [] };
    group.paths.push(path);
    groups.set(key, group);
  };
  for (const path of paths) {
    add(path.platform, path.version, '', '', path);
    add(path.platform, '*', '', '', path);
    for (const d of dimensions) add(path.platform, '*', d, path.dims[d]!, path);
  }
  const capSeconds = flow.stepTimeCapSeconds;
  return [...groups.values()].map(({ row, paths: members }) => {
    const gaps = flow.steps.map((_, i) =>
      i === 0
        ? []
        : members
            .map((m) => (m.times[i] !== null && m.times[i - 1] !== null ? (m.times[i]! - m.times[i - 1]!) / 1000 : null))
            .filter((g): g is number => g !== null && g <= capSeconds),
    );
    return {
      ...row,
      entered: flow.steps.map((_, i) => members.filter((m) => m.entryStep === i).length),
      reached: flow.steps.map((_, i) => members.filter((m) => m.times[i] !== null).length),
      secondsMedian: gaps.map((g, i) => (i === 0 ? null : percentileCont(g, 0.5))),
      secondsP90: gaps.map((g, i) => (i === 0 ? null : percentileCont(g, 0.9))),
      timed: gaps.map((g) => g.length),
    };
  });
}

export interface ReferenceCountRow {
  event: string;
  platform: string;
  version: string;
  dimension: string;
  value: string;
  events: number;
  people: number;
}

/**
 * Events and distinct people per event x platform x version, per event x
 * platform ('*'), and per event x platform x dimension value, where a person's
 * events count under the lowest value (byte order) they showed that day.
 */
export function referenceCounts(events: RawEvent[], platforms: Record<string, string[]>, dimensions: string[], lo: Date, hi: Date): ReferenceCountRow[] {
  const inDay = events.filter((e) => e.at.getTime() >= lo.getTime() && e.at.getTime() < hi.getTime());
  const rows = new Map<string, ReferenceCountRow & { persons: Set<string> }>();
  const bump = (event: string, platform: string, version: string, dimension: string, value: string, n: number, person: string | null) => {
    const key = [event, platform, version, dimension, value].join('\u0000');
    const row = rows.get(key) ?? { event, platform, version, dimension, value, events: 0, people: 0, persons: new Set<string>() };
    row.events += n;
    if (person !== null) row.persons.add(person);
    rows.set(key, row);
  };
  const perPlatform = new Map<string, { event: string; platform: string; person: string | null; n: number; dims: Record<string, string> }>();
  for (const e of inDay) {
    const platform = platformOf(e.platform, platforms);
    const person = personOf(e);
    bump(e.name, platform, e.version ?? '', '', '', 1, person);
    const key = [e.name, platform, person ?? '\u0001null'].join('\u0000');
    const entry = perPlatform.get(key) ?? { event: e.name, platform, person, n: 0, dims: {} };
    entry.n += 1;
    for (const d of dimensions) {
      const value = String((e as unknown as Record<string, unknown>)[d] ?? '');
      const current = entry.dims[d];
      if (current === undefined || byteOrder(value, current) < 0) entry.dims[d] = value;
    }
    perPlatform.set(key, entry);
  }
  for (const entry of perPlatform.values()) {
    bump(entry.event, entry.platform, '*', '', '', entry.n, entry.person);
    for (const d of dimensions) bump(entry.event, entry.platform, '*', d, entry.dims[d]!, entry.n, entry.person);
  }
  return [...rows.values()].map(({ persons, ...row }) => ({ ...row, people: persons.size }));
}

export interface ReferenceStepRow {
  platform: string;
  version: string;
  step: number;
  events: number;
  people: number;
}

/** Events and distinct people matching each step on the day, in any order, per platform x version and per platform. */
export function referenceStepCounts(events: RawEvent[], flow: FlowDefinition, platforms: Record<string, string[]>, lo: Date, hi: Date): ReferenceStepRow[] {
  const rows = new Map<string, ReferenceStepRow & { persons: Set<string> }>();
  for (const event of events) {
    const at = event.at.getTime();
    if (at < lo.getTime() || at >= hi.getTime()) continue;
    const platform = platformOf(event.platform, platforms);
    const person = personOf(event);
    flow.steps.forEach((step, index) => {
      if (!matchesStep(event, step)) return;
      for (const version of [event.version ?? '', '*']) {
        const key = [platform, version, index].join('\u0000');
        const row = rows.get(key) ?? { platform, version, step: index, events: 0, people: 0, persons: new Set<string>() };
        row.events += 1;
        if (person !== null) row.persons.add(person);
        rows.set(key, row);
      }
    });
  }
  return [...rows.values()].map(({ persons, ...row }) => ({ ...row, people: persons.size }));
}
