/**
 * The "Metro Pass" demo scenario as numbers: platforms, volumes, conversion,
 * releases and the days the incidents happen. `planDay` turns them into one
 * day's plan (how many journeys of each kind per platform, which app versions
 * people run, which incidents are switched on); the SQL in `generate-sql.ts` then
 * expands each journey into events inside PostgreSQL.
 *
 * Everything random here is a hash of (seed, day, platform, kind), never a
 * shared generator, so a day comes out the same whatever range it is part of.
 */
import { createHash } from 'node:crypto';
import { addDays } from '../config/definitions.js';

export const DEMO_TIMEZONE = 'America/New_York';
export const DEMO_FROM = '2026-07-01';
export const DEMO_TO = '2026-11-30';
export const DEFAULT_SEED = 7;

export interface Release {
  version: string;
  /** First day the version is seen; adoption then follows `adoption()`. */
  firstDay: string;
  /** Share of people who eventually run it (or a newer one): the rest stay on older versions. */
  ceiling: number;
}

export interface ConversionRates {
  /** Continuation intro -> zone, zone -> rider, rider -> review. */
  zone: number;
  rider: number;
  review: number;
  /** Outcome shares among people who reach pay_review; the rest leave without a result. */
  approved: number;
  declined: number;
  cancelled: number;
}

export interface PlatformModel {
  /** plumbline's platform name (the config maps raw values onto it). */
  id: 'web' | 'android' | 'ios';
  /** Raw value of the platform column. */
  raw: string;
  /** 1-based, stable: part of every random key. */
  index: number;
  /** Journeys on a plain weekday at scale 1: pass funnel entries, sign-up form views, other sessions. */
  base: { pass: number; signup: number; other: number };
  /** Share of people who are not signed in (user_id null). */
  anonymousShare: number;
  conversion: ConversionRates;
  /** Sign-up methods and their shares (they add up to 1). */
  signupMethods: ReadonlyArray<readonly [string, number]>;
  /** Versions people ran before the first release below (picked per person), empty on web. */
  baseVersions: readonly string[];
  releases: readonly Release[];
}

export const PLATFORMS: readonly PlatformModel[] = [
  {
    id: 'web',
    raw: 'web',
    index: 1,
    base: { pass: 1000, signup: 160, other: 250 },
    anonymousShare: 0.5,
    conversion: { zone: 0.78, rider: 0.84, review: 0.9, approved: 0.73, declined: 0.08, cancelled: 0.08 },
    signupMethods: [
      ['email', 0.6],
      ['google', 0.4],
    ],
    baseVersions: [],
    releases: [],
  },
  {
    id: 'android',
    raw: 'Android',
    index: 2,
    base: { pass: 1400, signup: 130, other: 800 },
    anonymousShare: 0.06,
    conversion: { zone: 0.81, rider: 0.85, review: 0.89, approved: 0.75, declined: 0.07, cancelled: 0.07 },
    signupMethods: [
      ['email', 0.45],
      ['google', 0.55],
    ],
    baseVersions: ['7.2.1', '7.2.2', '7.2.3'],
    releases: [
      { version: '7.3.0', firstDay: '2026-07-21', ceiling: 0.94 },
      { version: '7.4.0', firstDay: '2026-10-13', ceiling: 0.91 },
      { version: '7.4.1', firstDay: '2026-10-27', ceiling: 0.91 },
    ],
  },
  {
    id: 'ios',
    raw: 'iOS',
    index: 3,
    base: { pass: 900, signup: 100, other: 550 },
    anonymousShare: 0.05,
    conversion: { zone: 0.82, rider: 0.87, review: 0.91, approved: 0.77, declined: 0.06, cancelled: 0.07 },
    signupMethods: [
      ['email', 0.35],
      ['apple', 0.5],
      ['google', 0.15],
    ],
    baseVersions: ['5.0.1', '5.0.2'],
    releases: [
      { version: '5.1.0', firstDay: '2026-08-04', ceiling: 0.95 },
      { version: '5.2.0', firstDay: '2026-11-04', ceiling: 0.92 },
    ],
  },
];

/** Days and versions of the injected incidents (ground-truth.ts describes them). */
export const INCIDENT_DAYS = {
  androidDuplicates: { from: '2026-08-18', to: '2026-08-24' },
  laborDay: '2026-09-07',
  webPayReviewOutage: { from: '2026-09-22', to: '2026-09-23' },
  canadaDeclines: { from: '2026-10-05', to: '2026-10-07' },
  thanksgiving: '2026-11-26',
  collectorDelay: '2026-11-30',
} as const;
export const RIDER_DROPPED_IN = '7.4.0';
export const RIDER_FIXED_IN = '7.4.1';
export const ZONE_RENAMED_IN = '5.2.0';
/** Local time the collector stopped delivering on the delayed day. */
export const COLLECTOR_STOPPED_AT = '14:00';
/** Share of Canadian payment attempts declined during `canadaDeclines`. */
export const CANADA_DECLINE_SHARE = 0.8;

/** Multiplier of every kind of traffic on declared holidays (config/plumbline.yaml's calendar). */
const HOLIDAYS: Record<string, number> = { [INCIDENT_DAYS.laborDay]: 0.55, [INCIDENT_DAYS.thanksgiving]: 0.5 };

/** Monday-first weekday multipliers: pass buying dips at weekends, commuting (ticket scans) more so. */
const WEEKDAY = {
  pass: [1.0, 1.03, 1.01, 0.98, 0.9, 0.62, 0.58],
  signup: [1.0, 1.02, 1.0, 0.98, 0.93, 0.7, 0.66],
  other: [1.0, 1.02, 1.02, 1.0, 0.95, 0.5, 0.42],
} as const;
/** Days 1-2 of a month: riders renew their passes. */
const MONTH_START = { pass: 1.8, signup: 1.25, other: 1.0 } as const;
/** Growth per day, anchored at DEMO_FROM so a day's volume does not depend on the range generated. */
const TREND_PER_DAY = 0.0005;
/** Day-to-day noise (log scale) shared by all platforms, and each platform's own. */
const DAY_NOISE = 0.04;
const PLATFORM_NOISE = 0.03;
/** Size of each platform's population of pass riders, in weekday pass journeys. */
const POPULATION_DAYS = 25;
/** Person numbers and journey slots stay below 2^25 (see generate-sql.ts): this bounds the scale. */
export const MAX_SCALE = 500;

export function riderPopulation(platform: PlatformModel, scale: number): number {
  return Math.max(1, Math.round(platform.base.pass * scale * POPULATION_DAYS));
}

export type JourneyKind = 'pass' | 'signup' | 'other';
export const JOURNEY_KINDS: readonly JourneyKind[] = ['pass', 'signup', 'other'];

/**
 * Share of a platform's people running a release (or a newer one) `t` days
 * after its first day: about 5% on day 1 and 97% of the ceiling by day 8.
 */
export function adoption(t: number, ceiling: number): number {
  if (t < 0) return 0;
  return ceiling / (1 + Math.exp(-0.9 * (t - 3.2)));
}

export interface ScenarioSwitches {
  scale: number;
  seed: number;
  /** Inject the incidents (the holidays are part of the calendar and always there). */
  incidents: boolean;
  /** Last day generated: the collector delay only makes sense on the newest day. */
  to: string;
}

export interface VersionShare {
  version: string;
  /** People whose update eagerness is below this run the version (or a newer one listed before it). */
  threshold: number;
}

export interface PlatformDay {
  platform: PlatformModel;
  journeys: Record<JourneyKind, number>;
  /** Released versions in use, newest first; people above every threshold stay on a base version. */
  versions: VersionShare[];
}

/** Local days, inclusive. */
export interface DayRange {
  from: string;
  to: string;
}

/**
 * The incidents to inject. Ranges apply by event time (an outage drops the
 * events sent on its days, whenever their journey began); versions apply
 * whenever that version runs.
 */
export interface IncidentSwitches {
  /** App version that sends no screen_shown {view: rider_details}, if any. */
  dropRiderVersion: string | null;
  /** App version that sends `zone` instead of `fare_zone`, if any. */
  renameZoneVersion: string | null;
  webPayReviewOutage: DayRange | null;
  androidDuplicates: DayRange | null;
  canadaDeclines: DayRange | null;
  /** Nothing is delivered from this local day and time on. */
  collectorStop: { day: string; time: string } | null;
}

export interface DayPlan {
  day: string;
  /** Days since 2000-01-01: keys the day's random streams. */
  dayNumber: number;
  platforms: PlatformDay[];
  incidents: IncidentSwitches;
}

export function planDay(day: string, switches: ScenarioSwitches): DayPlan {
  const date = new Date(`${day}T00:00:00Z`);
  const weekday = (date.getUTCDay() + 6) % 7;
  const monthStart = date.getUTCDate() <= 2;
  const trend = Math.exp(TREND_PER_DAY * daysFrom(DEMO_FROM, day));
  const holiday = HOLIDAYS[day] ?? 1;
  const shared = DAY_NOISE * normal(`${switches.seed}|${day}|day`);

  const platforms = PLATFORMS.map((platform): PlatformDay => {
    const own = PLATFORM_NOISE * normal(`${switches.seed}|${day}|${platform.id}|noise`);
    const level = trend * holiday * Math.exp(shared + own - (DAY_NOISE ** 2 + PLATFORM_NOISE ** 2) / 2);
    const journeys = {} as Record<JourneyKind, number>;
    for (const kind of JOURNEY_KINDS) {
      const mean = platform.base[kind] * switches.scale * WEEKDAY[kind][weekday]! * (monthStart ? MONTH_START[kind] : 1) * level;
      // Poisson-like variation through its normal approximation.
      const draw = mean + Math.sqrt(mean) * normal(`${switches.seed}|${day}|${platform.id}|${kind}`);
      journeys[kind] = Math.max(0, Math.round(draw));
    }
    const versions = platform.releases
      .map((release) => ({ version: release.version, threshold: adoption(daysFrom(release.firstDay, day), release.ceiling) }))
      .filter((share) => share.threshold > 0)
      .reverse();
    return { platform, journeys, versions };
  });

  return {
    day,
    dayNumber: daysFrom('2000-01-01', day),
    platforms,
    incidents: incidentSwitches(switches),
  };
}

export function incidentSwitches(switches: ScenarioSwitches): IncidentSwitches {
  const on = switches.incidents;
  return {
    dropRiderVersion: on ? RIDER_DROPPED_IN : null,
    renameZoneVersion: on ? ZONE_RENAMED_IN : null,
    webPayReviewOutage: on ? INCIDENT_DAYS.webPayReviewOutage : null,
    androidDuplicates: on ? INCIDENT_DAYS.androidDuplicates : null,
    canadaDeclines: on ? INCIDENT_DAYS.canadaDeclines : null,
    // A stalled collector only makes sense on the newest day; earlier it would be permanent loss.
    collectorStop: on && switches.to === INCIDENT_DAYS.collectorDelay ? { day: switches.to, time: COLLECTOR_STOPPED_AT } : null,
  };
}

export function daysFrom(from: string, to: string): number {
  return Math.round((Date.parse(`${to}T00:00:00Z`) - Date.parse(`${from}T00:00:00Z`)) / 86_400_000);
}

/** Last day of a release's one-week rollout window (the day adoption passes ~90%). */
export function rolloutComplete(release: Release): string {
  return addDays(release.firstDay, 7);
}

/** A standard normal draw determined by `key` (Box-Muller over two hashed uniforms). */
export function normal(key: string): number {
  const u1 = uniform(`${key}|a`);
  const u2 = uniform(`${key}|b`);
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/** A uniform draw in (0, 1) determined by `key`: 48 bits of its SHA-256. */
export function uniform(key: string): number {
  const bits = createHash('sha256').update(key).digest().readUIntBE(0, 6);
  return (bits + 0.5) / 2 ** 48;
}
