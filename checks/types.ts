/**
 * The contract between plumbline's service and its checks. A check is a pure
 * function over rollup history: no SQL, network or clock inside. The service
 * loads the rows below from its state schema (never from raw events) and hands
 * them over; `backtest` replays the same rows through the same code.
 */
import type { z } from 'zod';

/** Calendar days are ISO dates (`YYYY-MM-DD`) in the configured business timezone. */
export type Day = string;

/** The version value of rows that combine all app versions of a platform. */
export const ALL_VERSIONS = '*';
/** The version value of events sent without an app version (typical on web). */
export const NO_VERSION = '';

/** Daily count of one event on one platform (and version, and dimension value). */
export interface EventDayRow {
  day: Day;
  event: string;
  platform: string;
  /** Raw app version, `NO_VERSION`, or `ALL_VERSIONS` for the platform total. */
  version: string;
  /** Configured extra dimension (e.g. `country`), or '' for no breakdown. */
  dimension: string;
  /** Value of that dimension, '' when `dimension` is ''. */
  value: string;
  events: number;
  /** Distinct people: user id, falling back to device id. */
  people: number;
}

/** Observed profile of one parameter key of one event, per platform and version. */
export interface ParamDayRow {
  day: Day;
  event: string;
  platform: string;
  version: string;
  key: string;
  /** JSON type as reported by PostgreSQL `jsonb_typeof`: string, number, boolean, object, array, null. */
  jsonType: string;
  /** Events carrying the key with this JSON type (JSON null is its own type, 'null'). */
  events: number;
  /** Distinct values seen that day; null when the key is known to have too many to profile. */
  distinctValues: number | null;
  /** Most frequent values (up to 12) of low-cardinality keys; empty otherwise. */
  topValues: Array<{ value: string; events: number }>;
  /** Smallest and largest value, for jsonType 'number'; null otherwise. */
  minNumber: number | null;
  maxNumber: number | null;
  /** Numbers with a fractional part (an integer contract's violations). */
  fractional: number;
  /** Events of this event/platform/version that day, to turn counts into rates. */
  eventTotal: number;
}

/** People at each step of a flow's funnel, for the cohort that entered on `day`. */
export interface FunnelDayRow {
  day: Day;
  flow: string;
  platform: string;
  version: string;
  dimension: string;
  value: string;
  /** 0-based step index in the flow's ordered steps. */
  step: number;
  /** People whose path started at this step (only step 0 with `entry: first_step_only`). */
  entered: number;
  /** People whose path reached this step within the conversion window. */
  reached: number;
  /** Time from the previous step, seconds, leaving out times above the step time cap; null when none. */
  secondsMedian: number | null;
  secondsP90: number | null;
  /** How many step-to-step times entered the two statistics above. */
  timed: number;
}

/** Events and people matching a step's definition on a day, in any order (not a funnel). */
export interface StepDayRow {
  day: Day;
  flow: string;
  /** 0-based step index. */
  step: number;
  platform: string;
  /** Raw app version, `NO_VERSION`, or `ALL_VERSIONS` for the platform total. */
  version: string;
  events: number;
  people: number;
}

/** What the freshness probe saw of a day, per platform. */
export interface DayStatusRow {
  day: Day;
  platform: string;
  events: number;
  /** Newest event time of the day (ISO timestamp), null when the day has none. */
  newestAt: string | null;
  /** Events per local hour of the day: 23, 24 or 25 entries (DST days). */
  hourly: number[];
  /** When the day was last rolled up (ISO timestamp). */
  rolledUpAt: string;
  /** Event count at the previous rollup of the same day, when the day was rolled up before. */
  previousEvents: number | null;
  /**
   * Rows plumbline could not use as they were, per reason (no_event_name,
   * reserved_version, long_text, unreadable_params; service/warehouse/mapping.ts):
   * `no_event_name` rows are set aside and not in `events`, the others are counted there repaired.
   */
  badRows?: Record<string, number>;
  /**
   * Row limits the day's rollup reached (service/warehouse/mapping.ts,
   * ROW_LIMITS: event_names, versions, dimension_values, param_keys): the
   * distinct values seen and the number kept; the rest are only counted.
   */
  overLimits?: Record<string, { seen: number; kept: number }>;
}

export interface CalendarDay {
  day: Day;
  note: string;
  expect: 'low' | 'high';
}

export type Severity = 'page' | 'warn' | 'note';

/** The declared parameter contract of an event (from the flow file). */
export interface ParamContract {
  type: 'string' | 'integer' | 'number' | 'boolean' | 'object' | 'array';
  enum?: Array<string | number | boolean>;
  min?: number;
  max?: number;
  required: boolean;
  nullable: boolean;
}

export interface FlowStep {
  name: string;
  event: string;
  where: Record<string, string | number | boolean | Array<string | number | boolean>>;
}

/** The parts of a flow definition that checks may read. */
export interface FlowDefinition {
  id: string;
  owner: string;
  steps: FlowStep[];
  conversionWindowSeconds: number;
  stepTimeCapSeconds: number;
  entry: 'first_step_only' | 'any_step';
  platforms: string[];
  /** Events watched by the flow: step events plus declared ones. */
  events: string[];
  contracts: Record<string, Record<string, ParamContract>>;
}

export interface CheckInput {
  flow: FlowDefinition;
  /** The day being judged. */
  day: Day;
  /**
   * Days of history, oldest first, ending with `day`: consecutive, except that
   * a silence (days no platform of the flow sent an event) may give up whole
   * weeks to older days with data (service/pipeline/history.ts, windowDays),
   * so every day keeps its weekday's place.
   */
  days: Day[];
  events: EventDayRow[];
  params: ParamDayRow[];
  funnel: FunnelDayRow[];
  steps: StepDayRow[];
  status: DayStatusRow[];
  /** Declared expected highs and lows, expanded to single days (flow and global entries). */
  calendar: CalendarDay[];
  /**
   * Days earlier runs judged anomalous, by series key (see `Finding.seriesKey`).
   * Baselines must leave these days out so they never learn from an incident.
   */
  anomalous: Record<string, Day[]>;
  /** The run's clock (ISO timestamp), passed in so checks stay pure. */
  now: string;
  timezone: string;
  /** `delivery.hide_values`: messages must not quote parameter values seen in the data. */
  hideValues?: boolean;
  /**
   * Set while the flow is still learning: it has data on fewer earlier days
   * than `needed` (`judging.learning_days`). Checks that compare with history
   * stay silent until then; the first sight of a series, key or value is its
   * baseline, not a change.
   */
  learning?: { days: number; needed: number };
  /**
   * Series keys (`Finding.seriesKey`) that an unresolved incident of the flow
   * holds among its symptoms: checks with `outside` say which of them are
   * still outside their expected band.
   */
  open?: string[];
}

/** One point of the series behind a finding. */
export interface ExcerptPoint {
  day: Day;
  value: number | null;
  expectedLow?: number;
  expectedHigh?: number;
  flagged?: boolean;
}

export interface Finding {
  check: string;
  /** Message template id within the check (e.g. `silent`, `drop`). */
  kind: string;
  flow: string;
  subject: {
    type: 'event' | 'step' | 'param' | 'flow' | 'day';
    /** Event name, step name, `event.param`, or flow id. */
    name: string;
    event?: string;
    param?: string;
    step?: string;
  };
  /** The measure judged (e.g. `people`, `events_per_person`, `conversion`). */
  metric: string;
  platform: string | null;
  version: string | null;
  day: Day;
  /** First day of the run of anomalous days that ends at `day`, when known. */
  since?: Day;
  observed: number;
  expected: { low: number; high: number; center: number };
  /** Signed strength of the evidence (check-specific scale, documented per check). */
  score: number;
  direction: 'up' | 'down' | 'none';
  severity: Severity;
  message: string;
  /** Stable id of the series judged, for baselines and incident fingerprints. */
  seriesKey: string;
  excerpt: ExcerptPoint[];
  /** Calendar note when the day is a declared high or low. */
  calendar?: string;
  /** Extra numbers behind the finding (check-specific). */
  evidence?: Record<string, number | string | null>;
  /** Set by the service when a configured mute covers the finding: the mute's reason. */
  muted?: string;
}

/** A check's say on whether the day can be judged at all (e.g. its events are still arriving). */
export interface Readiness {
  ready: boolean;
  reason?: string;
}

/** Options carry per-platform overrides merged over the flow-level values. */
export type WithPlatforms<O> = O & { per_platform: Record<string, O> };

export interface CheckModule<S extends z.ZodType = z.ZodType> {
  id: string;
  description: string;
  /** Strict schema of the check's options, with defaults (the flow file's `checks.<id>`). */
  options: S;
  /** Message templates, keyed by finding kind; `{name}` placeholders. */
  messages: Record<string, string>;
  run(input: CheckInput, options: WithPlatforms<z.output<S>>): Finding[];
  /**
   * Optional: whether the day is complete enough to judge. When any check says
   * no, only the checks with a gate run, and the day is judged again later.
   */
  gate?(input: CheckInput, options: WithPlatforms<z.output<S>>): Readiness;
  /**
   * The check compares the day with the flow's history: it does not run while
   * the flow is learning (`CheckInput.learning`). A check that judges some
   * things without history (schema's declared contracts) leaves this unset and
   * reads `input.learning` itself.
   */
  needsHistory?: boolean;
  /**
   * Optional (hysteresis): of the series in `input.open`, those still outside
   * their expected band on the judged day though under the finding
   * thresholds (`run` reported nothing about them). An open incident about
   * such a series is not over: the day is no clean day for it.
   */
  outside?(input: CheckInput, options: WithPlatforms<z.output<S>>): BandExceedance[];
}

/** A series of an open incident still outside its expected band on the judged day, under the finding thresholds. */
export interface BandExceedance {
  check: string;
  flow: string;
  /** As `Finding.seriesKey`. */
  seriesKey: string;
  platform: string | null;
  direction: 'up' | 'down';
  observed: number;
  /** The band the series is outside of (the hysteresis band, narrower than the finding thresholds). */
  expected: { low: number; high: number; center: number };
}
