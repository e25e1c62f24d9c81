/**
 * Judging one event on one platform: pooled counts over sets of app versions,
 * references from recent days, and the localisation that decides whether a
 * problem sits in one version (a release) or in the whole platform.
 *
 * Rates are always counts over counts of the same cells ("cells" are one
 * version on one day), so pooling versions or days is a plain sum.
 */
import { baselineExclusions } from '../series.js';
import { robustLocationScale, twoProportionZ, wilson, zForConfidence } from '../stats/index.js';
import { ALL_VERSIONS, type CheckInput, type Day, type Finding } from '../types.js';
import type { DayProfile, EventPlatform, VersionDay } from './profile.js';

/** x events out of n: a share, e.g. events missing a key out of the event's events. */
export interface Cell {
  x: number;
  n: number;
}

export type Measure = (day: VersionDay) => Cell;

/** Series families: findings about the same family and key share a series (and its anomalous days). */
export type Family = 'presence' | 'type' | 'null' | 'values' | 'range';

export interface Verdict {
  flagged: boolean;
  cell: Cell;
  observed: number;
  expected: { low: number; high: number; center: number };
  score: number;
  direction: Finding['direction'];
  evidence: Record<string, number | string | null>;
}

/** Fewest usable reference days (pooled count at least `min_events`): one week. */
export const MIN_REFERENCE_DAYS = 7;
/** Two-sided confidence of the drift tests: a rate must leave its reference at p < 0.001. */
const DRIFT_Z = zForConfidence(0.999);
/** Robust standard deviations of the reference's daily rates added to the band (day-to-day mix). */
const SPREAD_WIDTH = 3;

export interface ScopeOptions {
  tolerance: number;
  min_events: number;
  min_change: number;
  drift_days: number;
}

export interface Reference {
  x: number;
  n: number;
  /** Daily rates of the usable days. */
  rates: number[];
  days: number;
  /** Whose past it is: the versions themselves, or the platform's other versions. */
  source: 'own' | 'other versions';
}

export class EventScope {
  readonly today: DayProfile;
  /** Versions that sent the event on the judged day, sorted. */
  readonly versions: string[];
  /** The `drift_days` days before the judged day. */
  readonly past: Day[];
  private readonly exclusions = new Map<string, Set<Day>>();

  constructor(
    readonly profile: EventPlatform,
    readonly input: CheckInput,
    readonly options: ScopeOptions,
  ) {
    this.today = profile.days.get(input.day) ?? new Map();
    this.versions = [...this.today.keys()].sort();
    const last = input.days.length - 1;
    this.past = input.days.slice(Math.max(0, last - options.drift_days), last);
  }

  get event(): string {
    return this.profile.event;
  }

  get platform(): string {
    return this.profile.platform;
  }

  /** `schema:<family>:<event>.<key>:<platform>:<version>`, version `*` for the whole platform. */
  seriesKey(family: Family, key: string, version: string | null): string {
    return `schema:${family}:${this.event}.${key}:${this.platform}:${version ?? ALL_VERSIONS}`;
  }

  /**
   * Whether a version's cell of a day stays out of references of this series:
   * calendar days, and days the series was judged anomalous for that version
   * or for the whole platform.
   */
  excluder(family: Family, key: string): (version: string, day: Day) => boolean {
    const platformDays = this.exclusionsOf(this.seriesKey(family, key, null));
    // Called for every version and day of a reference: build each version's key once.
    const byVersion = new Map<string, Set<Day>>();
    return (version, day) => {
      if (platformDays.has(day)) return true;
      let days = byVersion.get(version);
      if (!days) byVersion.set(version, (days = this.exclusionsOf(this.seriesKey(family, key, version))));
      return days.has(day);
    };
  }

  private exclusionsOf(seriesKey: string): Set<Day> {
    let days = this.exclusions.get(seriesKey);
    if (!days) this.exclusions.set(seriesKey, (days = baselineExclusions(seriesKey, this.input.anomalous, this.input.calendar)));
    return days;
  }

  /** Pooled cell of a day over the versions `include` accepts. */
  pool(day: Day, include: (version: string) => boolean, measure: Measure): Cell {
    const cell = { x: 0, n: 0 };
    for (const [version, profile] of this.profile.days.get(day) ?? []) {
      if (!include(version)) continue;
      const part = measure(profile);
      cell.x += part.x;
      cell.n += part.n;
    }
    return cell;
  }

  /** Today's pooled cell over a set of versions. */
  poolToday(versions: readonly string[], measure: Measure): Cell {
    const set = new Set(versions);
    return this.pool(this.input.day, (version) => set.has(version), measure);
  }

  /**
   * What `versions` usually look like: their own recent past when it has
   * MIN_REFERENCE_DAYS usable days; otherwise (a new or small version) the
   * platform's other versions on the same recent days and on the judged day.
   * Null when neither has enough days.
   */
  reference(versions: readonly string[], measure: Measure, excluded: (version: string, day: Day) => boolean): Reference | null {
    const set = new Set(versions);
    const own = this.collect(this.past, (version, day) => set.has(version) && !excluded(version, day), measure);
    if (own.days >= MIN_REFERENCE_DAYS) return { ...own, source: 'own' };
    const others = this.collect(
      [...this.past, this.input.day],
      (version, day) => !set.has(version) && (day === this.input.day || !excluded(version, day)),
      measure,
    );
    return others.days >= MIN_REFERENCE_DAYS ? { ...others, source: 'other versions' } : null;
  }

  private collect(days: readonly Day[], include: (version: string, day: Day) => boolean, measure: Measure): Omit<Reference, 'source'> {
    const reference = { x: 0, n: 0, rates: [] as number[], days: 0 };
    for (const day of days) {
      const cell = this.pool(day, (version) => include(version, day), measure);
      if (cell.n < this.options.min_events) continue;
      reference.x += cell.x;
      reference.n += cell.n;
      reference.rates.push(cell.x / cell.n);
      reference.days += 1;
    }
    return reference;
  }

  /**
   * A contract rule: the share of events breaking it, flagged when its Wilson
   * 95% lower bound exceeds the tolerance (so a handful of odd events in a
   * small version does not count). Null below the `min_events` floor.
   */
  judgeShare(versions: readonly string[], measure: Measure, floor = true): Verdict | null {
    const cell = this.poolToday(versions, measure);
    if (cell.n < (floor ? this.options.min_events : 1)) return null;
    const x = Math.min(cell.x, cell.n);
    const interval = wilson(x, cell.n);
    return {
      flagged: interval.low > this.options.tolerance,
      cell: { x, n: cell.n },
      observed: x / cell.n,
      expected: { low: 0, high: this.options.tolerance, center: 0 },
      score: x / cell.n,
      direction: 'none',
      evidence: { events: x, of: cell.n, wilson_low: interval.low, wilson_high: interval.high },
    };
  }

  /**
   * Observed drift of a rate against its reference. The band is the reference
   * rate plus or minus the larger of `min_change` and (3.29 binomial standard
   * errors at the day's count + 3 robust standard deviations of the reference's
   * daily rates); a rate outside it on the `want` side whose two-proportion z
   * (the day against the pooled reference) passes 3.29 is flagged.
   */
  judgeRate(versions: readonly string[], measure: Measure, excluded: (version: string, day: Day) => boolean, want: 'up' | 'down', floor = true): Verdict | null {
    const cell = this.poolToday(versions, measure);
    if (cell.n < (floor ? this.options.min_events : 1)) return null;
    const reference = this.reference(versions, measure, excluded);
    if (!reference) return null;
    const rate = cell.x / cell.n;
    const center = reference.x / reference.n;
    const se = Math.sqrt((center * (1 - center)) / cell.n);
    const spread = reference.rates.length >= 2 ? robustLocationScale(reference.rates).scale : 0;
    const half = Math.max(this.options.min_change, DRIFT_Z * se + SPREAD_WIDTH * spread);
    const low = Math.max(0, center - half);
    const high = Math.min(1, center + half);
    const { z } = twoProportionZ(Math.round(cell.x), Math.round(cell.n), Math.round(reference.x), Math.round(reference.n));
    const flagged = want === 'down' ? rate < low && z <= -DRIFT_Z : rate > high && z >= DRIFT_Z;
    return {
      flagged,
      cell,
      observed: rate,
      expected: { low, high, center },
      score: z,
      direction: want,
      evidence: {
        events: cell.x,
        of: cell.n,
        reference_events: reference.x,
        reference_of: reference.n,
        reference_days: reference.days,
        reference: reference.source,
      },
    };
  }

  /**
   * Where a problem sits. Each version that sent the event is judged alone
   * (above the `min_events` floor); when some are flagged and the remaining
   * versions, pooled, show no sign of it, the problem belongs to those
   * versions (a release: "ios 5.2.0"). That last test has no floor: the
   * remaining versions may be small on a weekend, and their statistics (a
   * Wilson bound, a z-test) already widen with fewer events. Otherwise the
   * versions not already explained are judged pooled. A flag there belongs to
   * the versions below the floor that break the rule alone when the pool of
   * the others is clean (`breakSources`: a release on its first days, and the
   * later releases that kept its change), named by the first of them to
   * appear; otherwise it is a platform finding (version null): every version
   * changed at once.
   *
   * `judge(versions, floor)` returns null when the versions cannot be judged.
   */
  localise(judge: (versions: readonly string[], floor: boolean) => Verdict | null): Array<{ version: string | null; versions: string[]; verdict: Verdict }> {
    const cache = new Map<string, Verdict | null>();
    const judged = (versions: readonly string[], floor = true) => {
      const id = `${floor}\u0000${versions.join('\u0000')}`;
      if (!cache.has(id)) cache.set(id, judge(versions, floor));
      return cache.get(id)!;
    };
    const flagged = this.versions.filter((version) => judged([version])?.flagged === true);
    const clean = this.versions.filter((version) => !flagged.includes(version));
    const cleanVerdict = flagged.length > 0 && clean.length > 0 ? judged(clean, false) : null;
    const specific = cleanVerdict !== null && !cleanVerdict.flagged ? flagged : [];
    const out: Array<{ version: string | null; versions: string[]; verdict: Verdict }> = specific.map((version) => ({
      version,
      versions: [version],
      verdict: judged([version])!,
    }));
    const residual = this.versions.filter((version) => !specific.includes(version));
    if (residual.length > 0) {
      const verdict = judged(residual);
      const sources = verdict?.flagged ? breakSources(residual, judged) : [];
      if (sources.length > 0) out.push({ version: this.firstSent(sources), versions: sources, verdict: judged(sources, false) ?? verdict! });
      else if (verdict?.flagged) out.push({ version: null, versions: residual, verdict });
    }
    return out;
  }

  /** The version among `versions` that sent the event first in the history (a release before the ones that kept its change). */
  private firstSent(versions: readonly string[]): string {
    for (const day of this.input.days) {
      const sent = versions.filter((version) => this.profile.days.get(day)?.has(version));
      if (sent.length > 0) return sent.sort()[0]!;
    }
    return [...versions].sort()[0]!;
  }
}

/**
 * The versions a pooled flag comes from, however few their events: each
 * breaks the rule judged alone without the floor, and the pool of the other
 * versions is clean. A release on its first days (a few percent of the
 * platform) carries the whole symptom: the symptom's share of the platform is
 * the version's share, not a change of every version. Empty when no version
 * fits, or every version does (the platform changed).
 */
function breakSources(versions: readonly string[], judged: (versions: readonly string[], floor?: boolean) => Verdict | null): string[] {
  const sources = versions.filter((version) => judged([version], false)?.flagged === true);
  if (sources.length === 0 || sources.length === versions.length) return [];
  const rest = judged(
    versions.filter((version) => !sources.includes(version)),
    false,
  );
  return rest !== null && !rest.flagged ? sources : [];
}
