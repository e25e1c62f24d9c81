/**
 * The incident catalogue: every kind of fault or change the evaluation
 * injects, each drawn at random days, platforms, versions and magnitudes,
 * with its ground truth (days, platform, version or dimension value, the
 * checks expected to see it, the cause label a demanding analyst would give
 * it, and whether it should reach chat). See README.md for why each label.
 */
import type { CauseLabel } from '../../checks/causes/types.js';
import type { Rng } from './random.js';
import {
  adoption,
  dayOf,
  flowPlatformJourneys,
  stepJourneys,
  FIRST_INCIDENT_DAY,
  type FlowPlan,
  type PlatformPlan,
  type ReleasePlan,
  type Scenario,
} from './model.js';
import { NEW_VALUES, renamedKey } from './vocabulary.js';

/** What generate.ts changes in the rows. Days are day indices of the scenario, inclusive. */
export type Injection =
  | { kind: 'drop_step'; platform: number; version: string; event: string; where: string | null; fraction: number }
  | { kind: 'rename_param'; platform: number; versions: string[]; event: string; key: string; to: string }
  | { kind: 'param_as_text'; platform: number; event: string; key: string; from: number; to: number }
  | { kind: 'event_missing'; platform: number; event: string; from: number; to: number }
  | { kind: 'event_twice'; platform: number; event: string; from: number; to: number }
  | { kind: 'volume'; from: number; to: number; factor: number }
  | { kind: 'segment_drop'; dimension: string; value: string; from: number; to: number; drop: number }
  | { kind: 'early_stop'; day: number; hour: number }
  | { kind: 'late_rows'; day: number; platform: number; share: number; arrives: number }
  | { kind: 'continuation'; flow: string; step: number; from: number; to: number; factor: number }
  | { kind: 'step_time'; flow: string; step: number; from: number; to: number; factor: number; platform: number | null; version: string | null }
  | { kind: 'new_value'; platform: number; versions: string[]; event: string; key: string; value: string; share: number }
  | { kind: 'people_lost'; platform: number; from: number; share: number }
  | { kind: 'double_load'; day: number };

export interface Truth {
  /** `<type>#<n>/<flow>`: unique within the scenario. */
  id: string;
  type: IncidentType;
  flow: string;
  firstDay: string;
  lastDay: string;
  /** plumbline platform name, null when every platform is touched. */
  platform: string | null;
  /** The release that brought the fault, null when no version is to blame. */
  version: string | null;
  /** Later releases that keep a deliberate change (a renamed key, a new value): incidents naming them are about this truth too. */
  laterVersions: string[];
  segment: { dimension: string; value: string } | null;
  expectedChecks: string[];
  expectedLabel: CauseLabel;
  /** Should reach chat as warn or page; false: recorded as a note only (a declared calendar day). */
  alert: boolean;
  /**
   * Fewer people affected per day than plumbline can be asked to see
   * (MIN_AFFECTED_PEOPLE): left out of recall, and incidents matching it are
   * neither false nor duplicates.
   */
  minor: boolean;
  description: string;
}

/** People a day a fault must touch in a flow before missing it counts against recall (common practice: below this, daily counts are noise). */
export const MIN_AFFECTED_PEOPLE = 40;
/** Step-time faults hit steps whose median time is at least this (seconds). */
const STEP_TIME_MIN_SECONDS = 20;

export const INCIDENT_TYPES = [
  'release_stops_step',
  'release_renames_param',
  'web_param_type',
  'platform_event_missing',
  'platform_event_twice',
  'declared_holiday',
  'undeclared_holiday',
  'segment_drop',
  'early_stop',
  'late_rows',
  'conversion_regression',
  'step_time_regression',
  'release_new_value',
  'release_partial_step',
  'release_slow_step',
  'platform_people_lost',
  'double_load',
] as const;
export type IncidentType = (typeof INCIDENT_TYPES)[number];

/** Expected checks and cause label of each type (README.md gives the reasons). */
export const EXPECTATIONS: Record<IncidentType, { checks: string[]; label: CauseLabel; alert: boolean; what: string }> = {
  release_stops_step: { checks: ['volume', 'conversion', 'parity'], label: 'release', alert: true, what: 'one release stops sending a step event' },
  release_renames_param: { checks: ['schema'], label: 'release', alert: true, what: 'one release renames a parameter' },
  web_param_type: { checks: ['schema'], label: 'platform', alert: true, what: 'a parameter changes type on web (no versions)' },
  platform_event_missing: { checks: ['volume', 'conversion', 'parity'], label: 'platform', alert: true, what: 'an event missing on one platform for 1-3 days' },
  platform_event_twice: { checks: ['volume'], label: 'platform', alert: true, what: 'an event sent twice per occurrence on one platform' },
  declared_holiday: { checks: ['volume'], label: 'calendar', alert: false, what: 'a declared holiday (fewer people everywhere)' },
  undeclared_holiday: { checks: ['volume', 'seasonal'], label: 'behaviour', alert: true, what: 'an undeclared holiday (fewer people everywhere)' },
  segment_drop: { checks: ['segments'], label: 'segment', alert: true, what: 'one dimension value down 50-80%, the total less than the volume thresholds' },
  early_stop: { checks: ['freshness'], label: 'data_delay', alert: true, what: 'data stops early on the newest day' },
  late_rows: { checks: ['freshness'], label: 'data_delay', alert: true, what: 'late rows restate a past day on one platform' },
  conversion_regression: { checks: ['conversion', 'seasonal'], label: 'behaviour', alert: true, what: 'one step converts worse on every platform' },
  step_time_regression: { checks: ['seasonal'], label: 'behaviour', alert: true, what: 'one step takes longer on every platform' },
  release_new_value: { checks: ['schema'], label: 'release', alert: true, what: 'one release sends a new enum value' },
  release_partial_step: { checks: ['conversion', 'parity'], label: 'release', alert: true, what: 'one release breaks a step for a fraction of its users' },
  release_slow_step: { checks: ['seasonal'], label: 'release', alert: true, what: "one release triples a step's time" },
  platform_people_lost: { checks: ['volume', 'parity'], label: 'platform', alert: true, what: 'one platform loses 20-30% of its people from one day on' },
  double_load: { checks: ['freshness'], label: 'data_delay', alert: true, what: 'every row of a day loaded twice' },
};

interface Drawn {
  injection: Injection;
  from: number;
  to: number;
  platform: PlatformPlan | null;
  version: string | null;
  /** The versions carrying the fault, when more than `version`. */
  versions?: string[];
  segment?: { dimension: string; value: string };
  /** Affected people a day per flow; flows absent are untouched. */
  affected: Map<string, number>;
  description: string;
  /** Marks the calendar (declared holiday). */
  declare?: string;
}

interface Context {
  scenario: Scenario;
  rng: Rng;
  /** Releases already carrying an incident: one fault per release keeps the truth unambiguous. */
  usedReleases: Set<string>;
  /** Windows of drawn incidents, for overlaps. */
  windows: Array<{ from: number; to: number }>;
  /** Days already taken by a whole-table data fault or a holiday. */
  dataDays: Set<number>;
}

const last = (s: Scenario) => s.days - 1;

/** A start day for an incident lasting `length` days; sometimes inside an earlier incident, as faults overlap in life. */
function startDay(ctx: Context, length: number, latest = last(ctx.scenario) - length): number | undefined {
  const lo = FIRST_INCIDENT_DAY;
  if (latest < lo) return undefined;
  const long = ctx.windows.filter((w) => w.to - w.from >= 3 && w.from + 1 <= latest);
  if (long.length > 0 && ctx.rng.chance(0.4)) {
    const w = ctx.rng.pick(long);
    return Math.max(lo, Math.min(latest, ctx.rng.int(w.from + 1, Math.min(w.to, latest))));
  }
  return ctx.rng.int(lo, latest);
}

/**
 * People a day on `platform` sending the rows of `event` a fault touches (the
 * step with `where` when given, else every row of the event; `fraction` of
 * them, e.g. a release's share), for every flow
 * that watches the event: plumbline counts an event's people per platform
 * once, so every flow watching it sees the same series. A flow that sees the
 * fault only through another flow's step of a shared event gets it as minor
 * (0 people): the event's people hardly move, as they still send its other steps.
 */
function eventReach(s: Scenario, event: string, platform: PlatformPlan, where?: string | null, fraction = 1): Map<string, number> {
  let people = 0;
  const watching: Array<{ flow: string; owns: boolean }> = [];
  for (const flow of s.flows) {
    let watches = false;
    let touched = 0;
    flow.steps.forEach((step, i) => {
      if (step.event !== event) return;
      watches = true;
      if (where === undefined || step.where === where) touched = Math.max(touched, stepJourneys(s, flow, platform, i));
    });
    if (flow.watch?.event === event) {
      watches = true;
      if (where === undefined || where === null) touched = Math.max(touched, stepJourneys(s, flow, platform, flow.watch.afterStep) * flow.watch.share);
    }
    if (!watches) continue;
    people = Math.max(people, touched * fraction);
    watching.push({ flow: flow.id, owns: touched > 0 });
  }
  return new Map(people > 0 ? watching.map(({ flow, owns }) => [flow, owns ? people : 0]) : []);
}

function allFlows(s: Scenario, people: (flow: FlowPlan) => number): Map<string, number> {
  return new Map(s.flows.map((flow) => [flow.id, people(flow)]));
}

function appPlatforms(s: Scenario): PlatformPlan[] {
  return s.platforms.filter((p) => p.releases.length > 0);
}

/** Day index when people still on `release` are below 3% of the platform (the next release took over), or the last day. */
function releaseEnd(s: Scenario, platform: PlatformPlan, release: ReleasePlan): number {
  const next = platform.releases.find((r) => r.firstDay > release.firstDay);
  if (!next) return last(s);
  for (let day = next.firstDay; day <= last(s); day++) if (adoption(release, day) - adoption(next, day) < 0.03) return day;
  return last(s);
}

/** Peak share of a platform's people running exactly `release`. */
function peakShare(s: Scenario, platform: PlatformPlan, release: ReleasePlan): number {
  const next = platform.releases.find((r) => r.firstDay > release.firstDay);
  let peak = 0;
  for (let day = release.firstDay; day <= last(s); day++) peak = Math.max(peak, adoption(release, day) - (next ? adoption(next, day) : 0));
  return peak;
}

/**
 * A release on an app platform that starts late enough and lasts long enough
 * to be judged, with no fault yet. A bug (`kept: false`) goes away with the
 * next release; a deliberate change (`kept: true`, a renamed key, a new
 * value) stays in every later release.
 */
function pickRelease(ctx: Context, kept = false): { platform: PlatformPlan; release: ReleasePlan; end: number; share: number; versions: string[] } | undefined {
  const s = ctx.scenario;
  const options = appPlatforms(s).flatMap((platform) =>
    platform.releases
      .filter((r) => r.firstDay >= FIRST_INCIDENT_DAY && r.firstDay <= last(s) - 8 && !ctx.usedReleases.has(`${platform.id}|${r.version}`))
      .map((release) => ({
        platform,
        release,
        end: kept ? last(s) : releaseEnd(s, platform, release),
        share: kept ? release.ceiling : peakShare(s, platform, release),
        versions: kept ? platform.releases.filter((r) => r.firstDay >= release.firstDay).map((r) => r.version) : [release.version],
      }))
      .filter((o) => o.share >= 0.3 && o.end - o.release.firstDay >= 7),
  );
  if (options.length === 0) return undefined;
  return ctx.rng.pick(options);
}

/** A (flow, step >= 1) pair; with a platform, only steps that platform reaches often enough; `minSeconds`: only steps people spend that long on. */
function pickStep(ctx: Context, platform: PlatformPlan | null, minPeople: number, minSeconds = 0): { flow: FlowPlan; step: number } | undefined {
  const s = ctx.scenario;
  const options = s.flows.flatMap((flow) =>
    flow.steps
      .map((_, step) => ({ flow, step }))
      .filter(({ step }) => step >= 1 && flow.steps[step]!.gapMedian >= minSeconds)
      .filter(({ flow, step }) => (platform ? [platform] : s.platforms).reduce((sum, p) => sum + stepJourneys(s, flow, p, step), 0) >= minPeople),
  );
  return options.length > 0 ? ctx.rng.pick(options) : undefined;
}

/** A parameter of a watched event, with a filter on its plan. */
function pickParam(ctx: Context, test: (type: string, declared: boolean, hasValues: boolean) => boolean) {
  const s = ctx.scenario;
  const watched = new Set(s.flows.flatMap((f) => [...f.steps.map((st) => st.event), ...(f.watch ? [f.watch.event] : [])]));
  const options = Object.values(s.events)
    .filter((e) => watched.has(e.name))
    .flatMap((event) => event.params.filter((p) => test(p.type, p.declared, (p.values?.length ?? 0) > 0)).map((param) => ({ event, param })));
  return options.length > 0 ? ctx.rng.pick(options) : undefined;
}

/** A step event of one platform and a run of `minDays`-`maxDays` days for a fault of that platform's tracking. */
function platformEvent(ctx: Context, minPeople: number, minDays: number, maxDays: number) {
  const platform = ctx.rng.pick(ctx.scenario.platforms);
  const target = pickStep(ctx, platform, minPeople);
  if (!target) return undefined;
  const event = target.flow.steps[target.step]!.event;
  const length = ctx.rng.int(minDays, maxDays);
  const from = startDay(ctx, length);
  if (from === undefined) return undefined;
  return { platform, event, from, to: from + length - 1, version: null, affected: eventReach(ctx.scenario, event, platform) };
}

type Draw = (ctx: Context) => Drawn | undefined;

const DRAWS: Record<IncidentType, Draw> = {
  release_stops_step(ctx) {
    const chosen = pickRelease(ctx);
    if (!chosen) return undefined;
    const target = pickStep(ctx, chosen.platform, MIN_AFFECTED_PEOPLE / chosen.share);
    if (!target) return undefined;
    const step = target.flow.steps[target.step]!;
    return {
      injection: { kind: 'drop_step', platform: chosen.platform.index, version: chosen.release.version, event: step.event, where: step.where, fraction: 1 },
      from: chosen.release.firstDay,
      to: chosen.end,
      platform: chosen.platform,
      version: chosen.release.version,
      affected: eventReach(ctx.scenario, step.event, chosen.platform, step.where, chosen.share),
      description: `${chosen.platform.id} ${chosen.release.version} stops sending ${step.event}${step.where ? ` (${step.where})` : ''}, step ${step.name} of ${target.flow.id}`,
    };
  },
  release_renames_param(ctx) {
    const chosen = pickRelease(ctx, true);
    const found = pickParam(ctx, () => true);
    if (!chosen || !found) return undefined;
    const to = renamedKey(found.param.key, ctx.rng.int(0, 3));
    return {
      injection: { kind: 'rename_param', platform: chosen.platform.index, versions: chosen.versions, event: found.event.name, key: found.param.key, to },
      from: chosen.release.firstDay,
      to: chosen.end,
      platform: chosen.platform,
      version: chosen.release.version,
      versions: chosen.versions,
      affected: eventReach(ctx.scenario, found.event.name, chosen.platform, undefined, chosen.share),
      description: `${chosen.platform.id} ${chosen.release.version} sends \`${to}\` instead of \`${found.param.key}\` in ${found.event.name}, and so do later releases`,
    };
  },
  web_param_type(ctx) {
    const web = ctx.scenario.platforms.find((p) => p.kind === 'web');
    const found = pickParam(ctx, (type) => type === 'integer' || type === 'number');
    if (!web || !found) return undefined;
    const length = ctx.rng.int(3, 20);
    const from = startDay(ctx, length);
    if (from === undefined) return undefined;
    return {
      injection: { kind: 'param_as_text', platform: web.index, event: found.event.name, key: found.param.key, from, to: from + length - 1 },
      from,
      to: from + length - 1,
      platform: web,
      version: null,
      affected: eventReach(ctx.scenario, found.event.name, web),
      description: `${web.id} sends ${found.event.name}.${found.param.key} as text ("12") instead of a number for ${length} days, until a web deploy fixes it`,
    };
  },
  platform_event_missing(ctx) {
    const drawn = platformEvent(ctx, 150, 1, 3);
    if (!drawn) return undefined;
    const { platform, event, from, to } = drawn;
    return {
      injection: { kind: 'event_missing', platform: platform.index, event, from, to },
      ...drawn,
      description: `${platform.id} sends no ${event} at all for ${to - from + 1} day(s) (a tag or SDK outage)`,
    };
  },
  platform_event_twice(ctx) {
    const drawn = platformEvent(ctx, 100, 3, 10);
    if (!drawn) return undefined;
    const { platform, event, from, to } = drawn;
    return {
      injection: { kind: 'event_twice', platform: platform.index, event, from, to },
      ...drawn,
      description: `${platform.id} sends every ${event} twice, milliseconds apart, on all versions for ${to - from + 1} days`,
    };
  },
  declared_holiday: (ctx) => holiday(ctx, true),
  undeclared_holiday: (ctx) => holiday(ctx, false),
  segment_drop(ctx) {
    const s = ctx.scenario;
    if (s.dimensions.length === 0) return undefined;
    const dimension = ctx.rng.pick(s.dimensions);
    const drop = ctx.rng.uniform(0.5, 0.8);
    // The total must move less than the volume thresholds (30% by default): at most 22% here.
    const options = dimension.values.map((value, i) => ({ value, share: dimension.shares[i]! })).filter((v) => v.share * drop <= 0.22 && v.share >= 0.05);
    if (options.length === 0) return undefined;
    const { value, share } = ctx.rng.pick(options);
    const length = ctx.rng.int(1, 3);
    const from = startDay(ctx, length);
    if (from === undefined) return undefined;
    return {
      injection: { kind: 'segment_drop', dimension: dimension.name, value, from, to: from + length - 1, drop },
      from,
      to: from + length - 1,
      platform: null,
      version: null,
      segment: { dimension: dimension.name, value },
      affected: allFlows(s, (flow) => s.journeysPerDay * flow.share * share * drop),
      description: `${dimension.name} = ${value} (${Math.round(share * 100)}% of people) loses ${Math.round(drop * 100)}% of its people for ${length} day(s); the total moves ${Math.round(share * drop * 100)}%`,
    };
  },
  early_stop(ctx) {
    const s = ctx.scenario;
    const day = last(s);
    if (ctx.dataDays.has(day)) return undefined;
    const hour = ctx.rng.int(10, 17);
    return {
      injection: { kind: 'early_stop', day, hour },
      from: day,
      to: day,
      platform: null,
      version: null,
      affected: allFlows(s, (flow) => s.journeysPerDay * flow.share * 0.3),
      description: `the newest day's events stop at ${hour}:00 local time on every platform (the collector is behind)`,
    };
  },
  late_rows(ctx) {
    const s = ctx.scenario;
    const platform = ctx.rng.pick(s.platforms);
    const delay = ctx.rng.int(1, 4);
    const day = startDay(ctx, 1, last(s) - delay - 1);
    if (day === undefined || ctx.dataDays.has(day)) return undefined;
    const share = ctx.rng.uniform(0.2, 0.6);
    return {
      injection: { kind: 'late_rows', day, platform: platform.index, share, arrives: day + delay },
      from: day,
      to: day + delay,
      platform,
      version: null,
      affected: allFlows(s, (flow) => flowPlatformJourneys(s, flow, platform) * share),
      description: `${Math.round(share * 100)}% of ${platform.id}'s rows of ${dayOf(s, day)} (one ingestion shard) arrive ${delay} day(s) late`,
    };
  },
  conversion_regression(ctx) {
    const target = pickStep(ctx, null, 300);
    if (!target) return undefined;
    const factor = ctx.rng.uniform(0.6, 0.8);
    const length = ctx.rng.int(5, 20);
    const from = startDay(ctx, length);
    if (from === undefined) return undefined;
    const s = ctx.scenario;
    const step = target.flow.steps[target.step]!;
    const reached = s.platforms.reduce((sum, p) => sum + stepJourneys(s, target.flow, p, target.step), 0);
    return {
      injection: { kind: 'continuation', flow: target.flow.id, step: target.step, from, to: from + length - 1, factor },
      from,
      to: from + length - 1,
      platform: null,
      version: null,
      affected: new Map([[target.flow.id, reached * (1 - factor)]]),
      description: `${target.flow.id}: ${Math.round((1 - factor) * 100)}% fewer people continue to ${step.name} on every platform for ${length} days`,
    };
  },
  step_time_regression(ctx) {
    // A step people spend time on (a form, a payment): a 2-4-fold change there is tens of seconds or more.
    const target = pickStep(ctx, null, 200, STEP_TIME_MIN_SECONDS);
    if (!target) return undefined;
    const factor = ctx.rng.uniform(2, 4);
    const length = ctx.rng.int(5, 20);
    const from = startDay(ctx, length);
    if (from === undefined) return undefined;
    const s = ctx.scenario;
    const reached = s.platforms.reduce((sum, p) => sum + stepJourneys(s, target.flow, p, target.step), 0);
    return {
      injection: { kind: 'step_time', flow: target.flow.id, step: target.step, from, to: from + length - 1, factor, platform: null, version: null },
      from,
      to: from + length - 1,
      platform: null,
      version: null,
      affected: new Map([[target.flow.id, reached]]),
      description: `${target.flow.id}: the time to ${target.flow.steps[target.step]!.name} grows ${factor.toFixed(1)}-fold on every platform for ${length} days`,
    };
  },
  release_new_value(ctx) {
    const chosen = pickRelease(ctx, true);
    const found = pickParam(ctx, (type, _declared, hasValues) => type === 'string' && hasValues);
    if (!chosen || !found) return undefined;
    const value = ctx.rng.pick(NEW_VALUES.filter((v) => !found.param.values!.includes(v)));
    const share = ctx.rng.uniform(0.15, 0.5);
    return {
      injection: { kind: 'new_value', platform: chosen.platform.index, versions: chosen.versions, event: found.event.name, key: found.param.key, value, share },
      from: chosen.release.firstDay,
      to: chosen.end,
      platform: chosen.platform,
      version: chosen.release.version,
      versions: chosen.versions,
      affected: eventReach(ctx.scenario, found.event.name, chosen.platform, undefined, chosen.share * share),
      description: `${chosen.platform.id} ${chosen.release.version} sends ${found.event.name}.${found.param.key} = "${value}" (a value never sent before) in ${Math.round(share * 100)}% of events`,
    };
  },
  release_partial_step(ctx) {
    const chosen = pickRelease(ctx);
    if (!chosen) return undefined;
    const fraction = ctx.rng.uniform(0.25, 0.6);
    const target = pickStep(ctx, chosen.platform, MIN_AFFECTED_PEOPLE / (chosen.share * fraction));
    if (!target) return undefined;
    const step = target.flow.steps[target.step]!;
    return {
      injection: { kind: 'drop_step', platform: chosen.platform.index, version: chosen.release.version, event: step.event, where: step.where, fraction },
      from: chosen.release.firstDay,
      to: chosen.end,
      platform: chosen.platform,
      version: chosen.release.version,
      affected: eventReach(ctx.scenario, step.event, chosen.platform, step.where, chosen.share * fraction),
      description: `${chosen.platform.id} ${chosen.release.version} fails to send ${step.event}${step.where ? ` (${step.where})` : ''} (step ${step.name} of ${target.flow.id}) for ${Math.round(fraction * 100)}% of its users`,
    };
  },
  release_slow_step(ctx) {
    const chosen = pickRelease(ctx);
    if (!chosen) return undefined;
    const target = pickStep(ctx, chosen.platform, 100 / chosen.share, STEP_TIME_MIN_SECONDS);
    if (!target) return undefined;
    const factor = ctx.rng.uniform(2.5, 3.5);
    return {
      injection: { kind: 'step_time', flow: target.flow.id, step: target.step, from: chosen.release.firstDay, to: chosen.end, factor, platform: chosen.platform.index, version: chosen.release.version },
      from: chosen.release.firstDay,
      to: chosen.end,
      platform: chosen.platform,
      version: chosen.release.version,
      affected: new Map([[target.flow.id, stepJourneys(ctx.scenario, target.flow, chosen.platform, target.step) * chosen.share]]),
      description: `${chosen.platform.id} ${chosen.release.version} makes the time to ${target.flow.steps[target.step]!.name} (${target.flow.id}) ${factor.toFixed(1)} times as long`,
    };
  },
  platform_people_lost(ctx) {
    const s = ctx.scenario;
    const options = s.platforms.filter((p) => s.flows.some((f) => flowPlatformJourneys(s, f, p) >= 200));
    if (options.length === 0) return undefined;
    const platform = ctx.rng.pick(options);
    const share = ctx.rng.uniform(0.2, 0.3);
    const from = startDay(ctx, 10);
    if (from === undefined) return undefined;
    return {
      injection: { kind: 'people_lost', platform: platform.index, from, share },
      from,
      to: last(s),
      platform,
      version: null,
      affected: allFlows(s, (flow) => flowPlatformJourneys(s, flow, platform) * share),
      description: `${platform.id} loses ${Math.round(share * 100)}% of its people from ${dayOf(s, from)} on (tracking lost on some entry pages), for good`,
    };
  },
  double_load(ctx) {
    const s = ctx.scenario;
    const day = startDay(ctx, 1, last(s) - 1);
    if (day === undefined || ctx.dataDays.has(day)) return undefined;
    return {
      injection: { kind: 'double_load', day },
      from: day,
      to: day,
      platform: null,
      version: null,
      affected: allFlows(s, (flow) => s.journeysPerDay * flow.share),
      description: `every row of ${dayOf(s, day)} is loaded twice (the loader ran twice)`,
    };
  },
};

function holiday(ctx: Context, declared: boolean): Drawn | undefined {
  const s = ctx.scenario;
  const day = startDay(ctx, 1, last(s) - 1);
  if (day === undefined || ctx.dataDays.has(day)) return undefined;
  const factor = ctx.rng.uniform(0.35, 0.65);
  const note = ctx.rng.pick(['founders day', 'harvest holiday', 'river festival', 'lantern night', 'spring fair', 'civic holiday']);
  return {
    injection: { kind: 'volume', from: day, to: day, factor },
    from: day,
    to: day,
    platform: null,
    version: null,
    affected: allFlows(s, (flow) => s.journeysPerDay * flow.share * (1 - factor)),
    description: `${note}: every platform ${Math.round((1 - factor) * 100)}% lower, conversion unchanged${declared ? ', declared in the calendar' : ', not declared'}`,
    ...(declared ? { declare: note } : {}),
  };
}

/** Draws 7-10 incidents of distinct types (fewer when a type does not fit the scenario) into the scenario. */
export function drawIncidents(scenario: Scenario, rng: Rng): void {
  const ctx: Context = { scenario, rng, usedReleases: new Set(), windows: [], dataDays: new Set() };
  const wanted = rng.int(7, 10);
  let n = 0;
  for (const type of rng.shuffle(INCIDENT_TYPES)) {
    if (n >= wanted) break;
    // A fault no flow could be asked to see teaches nothing about recall: draw again (other days, targets,
    // magnitudes), and after three tries the next type takes its place.
    let drawn: Drawn | undefined;
    for (let attempt = 0; attempt < 3 && !drawn; attempt++) {
      const candidate = DRAWS[type](ctx);
      if (candidate && [...candidate.affected.values()].some((people) => people >= MIN_AFFECTED_PEOPLE)) drawn = candidate;
    }
    if (!drawn) continue;
    n++;
    if (drawn.version && drawn.platform) ctx.usedReleases.add(`${drawn.platform.id}|${drawn.version}`);
    if (['volume', 'early_stop', 'late_rows', 'double_load'].includes(drawn.injection.kind)) ctx.dataDays.add(drawn.from);
    ctx.windows.push({ from: drawn.from, to: drawn.to });
    scenario.injections.push(drawn.injection);
    if (drawn.declare) scenario.calendar.push({ day: drawn.from, note: drawn.declare });
    const expectation = EXPECTATIONS[type];
    for (const [flow, people] of drawn.affected) {
      scenario.truths.push({
        id: `${type}#${n}/${flow}`,
        type,
        flow,
        firstDay: dayOf(scenario, drawn.from),
        lastDay: dayOf(scenario, drawn.to),
        platform: drawn.platform?.id ?? null,
        version: drawn.version,
        laterVersions: (drawn.versions ?? []).filter((v) => v !== drawn.version),
        segment: drawn.segment ?? null,
        expectedChecks: expectation.checks,
        expectedLabel: expectation.label,
        alert: expectation.alert,
        minor: people < MIN_AFFECTED_PEOPLE,
        description: drawn.description,
      });
    }
  }
}
