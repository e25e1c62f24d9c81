/**
 * A whole invented scenario drawn from one seed: the app and its flows, the
 * events table's shape, the timezone, the volume and its weekly shape, the
 * platforms with their releases, the dimensions, and the incidents injected
 * with their ground truth (catalogue.ts). Pure: generate.ts turns the plan
 * into rows inside PostgreSQL and config.ts into plumbline's configuration.
 */
import { addDays } from '../config/definitions.js';
import { drawIncidents, type Injection, type Truth } from './catalogue.js';
import { Rng } from './random.js';
import {
  COLUMN_NAMES,
  DIMENSIONS,
  DOMAINS,
  FAILURE_VALUES,
  PARAM_POOL,
  PLATFORM_WORDS,
  RESULT_KEYS,
  SOURCES,
  SUCCESS_VALUES,
  TABLE_NAMES,
  TIMEZONES,
  VIEW_EVENTS,
  VIEW_KEYS,
  type PlatformKind,
} from './vocabulary.js';

export interface ParamPlan {
  key: string;
  type: 'integer' | 'number' | 'boolean' | 'string';
  /** Values of a string parameter and their shares. */
  values?: string[];
  shares?: number[];
  min?: number;
  max?: number;
  /** Declared in the flow file's contract. */
  declared: boolean;
  required: boolean;
}

export interface EventPlan {
  name: string;
  /** Parameters besides the step's `where` key (which generate.ts writes from the step). */
  params: ParamPlan[];
  /** The key that tells steps apart (view events) or carries the outcome (result events). */
  whereKey: string | null;
}

export interface StepPlan {
  name: string;
  event: string;
  /** The value of the event's `whereKey` that marks this step, null when the event alone marks it. */
  where: string | null;
  /** Chance to reach this step having reached the previous one (1 for the entry step). */
  continuation: number;
  /** Seconds from the previous step: log-normal median and log-scale spread. */
  gapMedian: number;
  gapSigma: number;
}

export interface FlowPlan {
  id: string;
  title: string;
  owner: string;
  /** Share of the day's journeys that are this flow's. */
  share: number;
  steps: StepPlan[];
  /** A further event sent by some people who reached `afterStep`, watched by the flow. */
  watch: { event: string; afterStep: number; share: number } | null;
  /** Result flows send their last event also for failures (with a failure value). */
  failureValue: string | null;
  conversionWindowSeconds: number;
  stepTimeCapSeconds: number;
}

export type VersionFormat = 'semver' | 'two_part' | 'build' | 'calendar';

export interface ReleasePlan {
  version: string;
  /** Day index of the first day the version is seen. */
  firstDay: number;
  /** Share of people who eventually run it or a newer one. */
  ceiling: number;
  /** Logistic adoption rate per day: slow rollouts 0.15-0.3, fast ones 0.7-1.2. */
  rate: number;
}

export interface PlatformPlan {
  kind: PlatformKind;
  /** plumbline's name for it (the config's key). */
  id: string;
  /** 1-based, part of every random stream. */
  index: number;
  /** Raw spellings in the platform column and the share of people whose client sends each. */
  raw: Array<{ value: string; share: number }>;
  /** Share of the day's journeys on this platform. */
  share: number;
  anonymousShare: number;
  /** Multiplies every continuation on this platform (platforms convert a little differently). */
  conversion: number;
  versionFormat: VersionFormat | null;
  /** Versions people run before any release of the scenario reaches them; empty without versions (web). */
  baseVersions: string[];
  releases: ReleasePlan[];
}

export interface DimensionPlan {
  name: string;
  values: string[];
  shares: number[];
}

export interface Scenario {
  seed: number;
  app: string;
  what: string;
  slug: string;
  timezone: string;
  /** First day of data and the number of days. */
  from: string;
  days: number;
  /** Days judged by a backfill when plumbline is installed; the daily runs take over after them. */
  backfillDays: number;
  table: string;
  columns: { time: string; name: string; user: string; device: string; platform: string; version: string; params: string };
  platforms: PlatformPlan[];
  flows: FlowPlan[];
  events: Record<string, EventPlan>;
  dimensions: DimensionPlan[];
  /** Journeys on a plain weekday at the start, over every flow and platform. */
  journeysPerDay: number;
  /** Monday-first multipliers. */
  weekday: number[];
  trendPerDay: number;
  /** Log-scale day-to-day noise shared by every platform, and each platform's own. */
  dayNoise: number;
  platformNoise: number;
  /** Daily peaks of activity: [share, local hour, spread in hours]; the rest spreads over 06:00-23:00. */
  peaks: Array<[number, number, number]>;
  /** Declared low days (the configuration's calendar). */
  calendar: Array<{ day: number; note: string }>;
  injections: Injection[];
  truths: Truth[];
}

/** Bounds on the draw; the CI test draws compact scenarios so that it runs in minutes. */
export interface DrawLimits {
  minDays: number;
  maxDays: number;
  maxJourneys: number;
}
export const FULL_RANGE: DrawLimits = { minDays: 60, maxDays: 200, maxJourneys: 20_000 };
export const COMPACT: DrawLimits = { minDays: 60, maxDays: 70, maxJourneys: 2_500 };
/** The CI test's seeds (compact draws): `npm run evaluate` refuses them, so nothing is tuned on the floors' own scenarios. */
export const CI_SEEDS: readonly number[] = [9001, 9002, 9003];

/** First day of any incident: the first 28 days are the checks' cold start, a week more lets baselines settle. */
export const FIRST_INCIDENT_DAY = 35;
export const COLD_START_DAYS = 28;

export function dayOf(scenario: Scenario, index: number): string {
  return addDays(scenario.from, index);
}
export function lastDay(scenario: Scenario): string {
  return dayOf(scenario, scenario.days - 1);
}

/**
 * Share of a platform's people running `release` (or a newer one) on day
 * index `day`: logistic in time, about 4% of its ceiling on its first day.
 */
export function adoption(release: ReleasePlan, day: number): number {
  const t = day - release.firstDay;
  if (t < 0) return 0;
  const midpoint = Math.log(1 / 0.04 - 1) / release.rate;
  return release.ceiling / (1 + Math.exp(-release.rate * (t - midpoint)));
}

/** Expected journeys of a flow on a platform on a plain weekday. */
export function flowPlatformJourneys(scenario: Scenario, flow: FlowPlan, platform: PlatformPlan): number {
  return scenario.journeysPerDay * flow.share * platform.share;
}

/** Expected people reaching step `step` of a flow on a platform on a plain weekday. */
export function stepJourneys(scenario: Scenario, flow: FlowPlan, platform: PlatformPlan, step: number): number {
  let n = flowPlatformJourneys(scenario, flow, platform);
  for (let s = 1; s <= step; s++) n *= Math.min(1, flow.steps[s]!.continuation * platform.conversion);
  return n;
}

export function drawScenario(seed: number, limits: DrawLimits = FULL_RANGE): Scenario {
  const rng = new Rng(seed);
  const domain = rng.fork('domain').pick(DOMAINS);
  const shape = rng.fork('shape');
  const days = shape.int(limits.minDays, limits.maxDays);
  // Most apps are small (where noise hurts), a few large: people skew to the bottom of the range.
  const journeysPerDay = Math.round(300 * (limits.maxJourneys / 300) ** (shape.next() ** 2.2));
  const from = addDays('2026-01-01', shape.int(0, 364));
  const timezone = shape.pick(TIMEZONES);
  const weekend = shape.uniform(0.45, 1.35);
  const weekday = [1, shape.uniform(0.95, 1.08), shape.uniform(0.95, 1.08), shape.uniform(0.92, 1.05), shape.uniform(0.85, 1.05), weekend, weekend * shape.uniform(0.85, 1.05)];
  const peaks: Array<[number, number, number]> = [
    [shape.uniform(0.2, 0.45), shape.uniform(7, 12), shape.uniform(0.8, 2)],
    [shape.uniform(0.25, 0.5), shape.uniform(17, 21.5), shape.uniform(1, 2.5)],
  ];

  const naming = rng.fork('naming');
  const columns = {
    time: naming.pick(COLUMN_NAMES.time),
    name: naming.pick(COLUMN_NAMES.name),
    user: naming.pick(COLUMN_NAMES.user),
    device: naming.pick(COLUMN_NAMES.device),
    platform: naming.pick(COLUMN_NAMES.platform),
    version: naming.pick(COLUMN_NAMES.version),
    params: naming.pick(COLUMN_NAMES.params),
  };
  const table = `${domain.slug}_${naming.pick(TABLE_NAMES)}`;

  const platforms = drawPlatforms(rng.fork('platforms'), days);
  const dimRng = rng.fork('dimensions');
  const dimensions = dimRng
    .sample(
      DIMENSIONS.filter((d) => !Object.values(columns).includes(d.name as never)),
      dimRng.pick([0, 1, 1, 2, 2, 3]),
    )
    .map((d) => {
      const values = dimRng.sample(d.values, dimRng.int(3, 8));
      return { name: d.name, values, shares: dimRng.zipfShares(values.length, dimRng.uniform(0.3, 1.2)) };
    });

  const { flows, events } = drawFlows(rng.fork('flows'), domain);
  const scenario: Scenario = {
    seed,
    app: domain.app,
    what: domain.what,
    slug: domain.slug,
    timezone,
    from,
    days,
    backfillDays: shape.int(7, 21),
    table,
    columns,
    platforms,
    flows,
    events,
    dimensions,
    journeysPerDay,
    weekday,
    trendPerDay: shape.uniform(-0.0008, 0.002),
    dayNoise: shape.uniform(0.02, 0.07),
    platformNoise: shape.uniform(0.01, 0.04),
    peaks,
    calendar: [],
    injections: [],
    truths: [],
  };
  drawIncidents(scenario, rng.fork('incidents'));
  return scenario;
}

function drawPlatforms(rng: Rng, days: number): PlatformPlan[] {
  const sets: PlatformKind[][] = [
    ['web', 'android', 'ios'],
    ['web', 'android', 'ios'],
    ['web', 'android', 'ios'],
    ['web', 'android'],
    ['android', 'ios'],
    ['web', 'ios'],
  ];
  const kinds = rng.pick(sets);
  const weights = kinds.map(() => rng.uniform(0.5, 1.5));
  const total = weights.reduce((a, b) => a + b, 0);
  return kinds.map((kind, i) => {
    const words = PLATFORM_WORDS[kind];
    const spellings = rng.sample(words.raw, rng.chance(0.3) ? 2 : 1);
    const first = spellings.length === 2 ? rng.uniform(0.6, 0.9) : 1;
    const versionFormat = kind === 'web' ? null : rng.pick<VersionFormat>(['semver', 'semver', 'two_part', 'build', 'calendar']);
    const { base, releases } = versionFormat ? drawReleases(rng, versionFormat, days) : { base: [], releases: [] };
    return {
      kind,
      id: rng.pick(words.ours),
      index: i + 1,
      raw: spellings.map((value, k) => ({ value, share: k === 0 ? first : 1 - first })),
      share: weights[i]! / total,
      anonymousShare: kind === 'web' ? rng.uniform(0.2, 0.65) : rng.uniform(0, 0.12),
      conversion: rng.uniform(0.92, 1.04),
      versionFormat,
      baseVersions: base,
      releases,
    };
  });
}

/** Version strings in one of the formats teams use, numbered upwards. */
function versionName(format: VersionFormat, major: number, minor: number, patch: number): string {
  switch (format) {
    case 'semver':
      return `${major}.${minor}.${patch}`;
    case 'two_part':
      return `${major}.${minor * 10 + patch}`;
    case 'build':
      return String(major * 1000 + minor * 40 + patch);
    case 'calendar':
      return `${26 + Math.floor(minor / 12)}.${(minor % 12) + 1}.${patch}`;
  }
}

function drawReleases(rng: Rng, format: VersionFormat, days: number): { base: string[]; releases: ReleasePlan[] } {
  const major = rng.int(2, 14);
  let minor = rng.int(1, 6);
  const base = Array.from({ length: rng.int(1, 3) }, (_, patch) => versionName(format, major, minor, patch));
  const releases: ReleasePlan[] = [];
  let day = rng.int(5, 30);
  let ceiling = rng.uniform(0.8, 0.9);
  while (day < days - 6) {
    minor += 1;
    ceiling = Math.min(0.98, ceiling + rng.uniform(0.005, 0.03));
    const fast = rng.chance(0.55);
    releases.push({ version: versionName(format, major, minor, 0), firstDay: day, ceiling, rate: fast ? rng.uniform(0.7, 1.2) : rng.uniform(0.15, 0.3) });
    day += rng.int(14, 40);
  }
  return { base, releases };
}

function caseStyle(rng: Rng): (words: string) => string {
  const style = rng.pick(['snake', 'snake', 'camel', 'dotted'] as const);
  if (style === 'camel') return (w) => w.replace(/_([a-z])/g, (_, c: string) => c.toUpperCase());
  if (style === 'dotted') return (w) => w.replace(/_/g, '.');
  return (w) => w;
}

function drawFlows(rng: Rng, domain: (typeof DOMAINS)[number]): { flows: FlowPlan[]; events: Record<string, EventPlan> } {
  const events: Record<string, EventPlan> = {};
  const style = caseStyle(rng);
  const viewEvent = rng.pick(VIEW_EVENTS);
  const viewKey = rng.pick(VIEW_KEYS);
  const resultKey = rng.pick(RESULT_KEYS);
  const success = rng.pick(SUCCESS_VALUES);
  const failures = rng.sample(FAILURE_VALUES, 2);
  const domainFlows = rng.sample(domain.flows, rng.int(1, Math.min(3, domain.flows.length)));
  const owners = ['product-analytics', 'growth', 'core-team'];
  const extraParam = (key: string): ParamPlan => {
    const spec = PARAM_POOL.find((p) => p.key === key)!;
    if (spec.type === 'kind') return { key, type: 'string', values: [...domain.kinds], shares: rng.zipfShares(domain.kinds.length, 0.8), declared: false, required: false };
    if (spec.type === 'source') return { key, type: 'string', values: [...SOURCES], shares: rng.zipfShares(SOURCES.length, 1), declared: false, required: false };
    return { key, type: spec.type, ...(spec.min !== undefined ? { min: spec.min, max: spec.max } : {}), declared: false, required: false };
  };
  const paramsFor = (n: number, exclude: string[] = []) =>
    rng.sample(PARAM_POOL.map((p) => p.key).filter((k) => !exclude.includes(k)), n).map(extraParam);

  // Views carry the step in a parameter, shared by every flow's view steps.
  const viewsUsed = rng.chance(0.75);
  if (viewsUsed) events[viewEvent] = { name: viewEvent, params: paramsFor(rng.int(0, 1), ['amount_minor']), whereKey: viewKey };

  const flows = domainFlows.map((d, f): FlowPlan => {
    const k = rng.int(2, 6);
    const middle = rng.sample([1, 2, 3, 4], k - 2).sort();
    const names = [0, ...middle, 5].map((i) => d.steps[i]!);
    const resultLast = rng.chance(0.6);
    const steps = names.map((name, i): StepPlan => {
      const last = i === names.length - 1;
      let event: string;
      let where: string | null = null;
      if (last && resultLast) {
        event = style(`${d.id}_result`);
        events[event] ??= {
          name: event,
          params: paramsFor(rng.int(1, 2)),
          whereKey: resultKey,
        };
        where = success;
      } else if (viewsUsed && rng.chance(0.6)) {
        event = viewEvent;
        where = style(name);
      } else {
        event = style(rng.pick([name, `${name}_done`, `tap_${name}`, `${name}_submitted`]));
        events[event] ??= { name: event, params: paramsFor(rng.int(0, 2)), whereKey: null };
      }
      return {
        name,
        event,
        where,
        continuation: i === 0 ? 1 : rng.uniform(0.45, 0.95),
        gapMedian: Math.round(rng.uniform(6, 150)),
        gapSigma: rng.uniform(0.5, 1.0),
      };
    });
    const watchEvent = rng.chance(0.5) ? style(`${d.id}_option_set`) : null;
    if (watchEvent) events[watchEvent] = { name: watchEvent, params: paramsFor(rng.int(1, 3)), whereKey: null };
    const typical = steps.reduce((sum, s) => sum + s.gapMedian, 0);
    return {
      id: d.id,
      title: d.title,
      owner: owners[f % owners.length]!,
      share: 0,
      steps,
      watch: watchEvent ? { event: watchEvent, afterStep: rng.int(0, steps.length - 2), share: rng.uniform(0.5, 1) } : null,
      failureValue: resultLast ? failures[0]! : null,
      // Long enough for nearly every journey, within the default settle time of two hours.
      conversionWindowSeconds: Math.min(7200, Math.max(1800, Math.ceil((typical * 6) / 600) * 600)),
      stepTimeCapSeconds: Math.max(600, Math.ceil((Math.max(...steps.map((s) => s.gapMedian)) * 8) / 300) * 300),
    };
  });
  const weights = flows.map((_, i) => (i === 0 ? rng.uniform(1.5, 3) : rng.uniform(0.5, 1.2)));
  const total = weights.reduce((a, b) => a + b, 0);
  flows.forEach((flow, i) => (flow.share = weights[i]! / total));

  // Contracts: some events declare their parameters (type, enum, range; some required).
  for (const event of Object.values(events)) {
    const declare = rng.chance(0.5);
    for (const param of event.params) {
      param.declared = declare;
      param.required = declare && rng.chance(0.4);
    }
  }
  return { flows, events };
}

/** The outcome values a result event sends: success first, then the failure values. */
export function resultValues(flow: FlowPlan): string[] {
  const last = flow.steps[flow.steps.length - 1]!;
  return [last.where!, ...(flow.failureValue ? [flow.failureValue] : [])];
}
