/**
 * The ClickHouse dialect of the flow statements: the funnel of one flow for
 * the cohort entering on the day, and its step counts in any order, with the
 * meaning of the PostgreSQL dialect (postgres/flow.ts describes the
 * matching). Each statement is put together from one builder per CTE.
 *
 * Per person and platform, the step events become one array of times per
 * step and the entry (earliest candidate, then lowest step, then the lowest
 * version and dimension values among the tied, byte order), through
 * streaming `argMin` aggregates; the path is then read off the arrays, each
 * step the earliest time at or after the previous step's and within the
 * window.
 * `windowFunnel` is not used: it answers "how far did the person get" over
 * its own choice of chains, not the earliest-reach times this definition
 * needs for the step times, and it has no entry at any step.
 *
 * The median and 90th percentile of the step times are computed as
 * PostgreSQL's percentile_cont does (linear interpolation between the
 * closest ranks, the same floating-point operations in the same order), so
 * both engines give the same bits.
 */
import type { FlowDefinition, FlowStep } from '../../../checks/types.js';
import type { DayRange } from '../engine.js';
import { dimensionAliases, stepsExclusive, whereValues } from '../mapping.js';
import { Columns, type EventsTable } from './columns.js';
import { ChParams, type ChQuery } from './sql.js';

/** Funnel rows per platform x version, per platform, and per platform x dimension value. */
export function funnelQuery(table: EventsTable, flow: FlowDefinition, range: DayRange): ChQuery {
  const p = new ChParams();
  const f = new FlowParts(table, flow, p, range);
  const text = `
with ${[f.stepEventsCte(), f.journeysCte(), ...f.reachCtes(), f.pathsCte(), f.pathGroupsCte(), f.funnelCellsCte()].join(',\n')}
${f.funnelRows()}`;
  return { text, params: p.values };
}

/** Events and distinct people matching each step on the day, in any order, per platform x version and per platform. */
export function stepCountsQuery(table: EventsTable, flow: FlowDefinition, range: DayRange): ChQuery {
  const p = new ChParams();
  const f = new FlowParts(table, flow, p, range);
  const text = `
with ${f.stepEventsCte()}
select 'step' as kind, platform, if(grouping(event_version) = 0, event_version, '*') as version, step, count() as events, uniqExact(person) as people
from step_events
where at < ${f.hi}
group by grouping sets ((platform, event_version, step), (platform, step))`;
  return { text, params: p.values };
}

class FlowParts {
  readonly c: Columns;
  readonly steps: number[];
  readonly dims;
  readonly anyStep: boolean;
  readonly hi: string;

  constructor(
    table: EventsTable,
    readonly flow: FlowDefinition,
    readonly p: ChParams,
    readonly range: DayRange,
  ) {
    this.c = new Columns(table, p);
    this.steps = flow.steps.map((_, i) => i);
    this.dims = dimensionAliases(table.mapping);
    this.anyStep = flow.entry === 'any_step';
    this.hi = p.micros(range.hi);
  }

  /**
   * The flow's step events of the day and the window after it, times in
   * microseconds: one step per row when steps cannot overlap, otherwise one
   * row per step the event matches. Each parameter a step filters on is read
   * once per row.
   */
  stepEventsCte(): string {
    const { c, p, flow } = this;
    const keys = [...new Set(flow.steps.flatMap((step) => Object.keys(step.where)))];
    // A parameter is read only from the events of the steps that filter on it.
    const param = (key: string, k: number) => {
      const events = [...new Set(flow.steps.filter((step) => key in step.where).map((step) => step.event))];
      return `if(has(${p.add(events, 'Array(String)')}, event), ${paramText(c, p.add(key, 'String'))}, null) as param_${k}`;
    };
    const conditions = flow.steps.map((step) => stepCondition(p, step, keys));
    const exclusive = stepsExclusive(flow.steps);
    const step = exclusive
      ? `multiIf(${conditions.map((cond, i) => `${cond}, ${i}`).join(', ')}, -1) as step`
      : `arrayFilter(s -> s >= 0, [${conditions.map((cond, i) => `if(${cond}, ${i}, -1)`).join(', ')}]) as matched`;
    const windowEnd = new Date(this.range.hi.getTime() + flow.conversionWindowSeconds * 1000);
    const roles = `${c.person} as person, ${c.platform} as platform, ${c.version} as event_version, ${c.micros} as at${this.dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('')}`;
    // Three levels, so the step's conditions read the parameters as columns, not as copies of their expressions.
    return `step_events as (
  select person, platform, event_version, at${this.dims.map((d) => `, ${d.alias}`).join('')}, step
  from (
    select *, ${step}
    from (
      select ${roles}, ${[`${c.name} as event`, ...keys.map(param)].join(', ')}
      from ${c.table}
      where ${c.inRange(p.instant(this.range.lo), p.instant(windowEnd))} and has(${p.add([...new Set(flow.steps.map((s) => s.event))], 'Array(String)')}, event)
    )
  )
  ${exclusive ? 'where step >= 0' : 'array join matched as step'}
)`;
  }

  /**
   * Per person and platform: each step's times, the entry time and step, and
   * each entry attribute (the lowest among the candidates tied at the entry,
   * byte order), with streaming aggregates keyed by (time, step, value).
   */
  journeysCte(): string {
    const entry = this.anyStep ? `at < ${this.hi}` : `step = 0 and at < ${this.hi}`;
    const attribute = (column: string) => `argMinIf(${column}, (at, step, ${column}), ${entry}) as entry_${column.replace('event_', '')}`;
    return `journeys as (
  select platform,
         ${this.steps.map((i) => `groupArrayIf(at, step = ${i}) as s${i}`).join(',\n         ')},
         minIf(at, ${entry}) as t_entry, argMinIf(step, (at, step), ${entry}) as entry_step,
         ${[attribute('event_version'), ...this.dims.map((d) => attribute(d.alias))].join(',\n         ')}
  from step_events
  where person is not null
  group by person, platform
  having countIf(${entry}) > 0
)`;
  }
  /**
   * t_i, when the person reached step i (null when not), one CTE per step:
   * each reads the previous step's time as a column, so no expression is
   * copied into the next (ClickHouse expands an alias wherever it is used).
   */
  reachCtes(): string[] {
    const window = this.p.add(this.flow.conversionWindowSeconds * 1_000_000, 'Int64');
    return this.steps.map((i) => {
      const from = i === 0 ? 'journeys' : `reach_${i - 1}`;
      if (i === 0) return `reach_0 as (select *, if(entry_step = 0, t_entry, null) as t0 from ${from})`;
      const previous = `t${i - 1}`;
      const inWindow = `arrayFilter(x -> x >= assumeNotNull(${previous}) and x <= t_entry + ${window}, s${i})`;
      // Most people have one event of the step: it is read without a lambda.
      return `reach_${i} as (
  select *, multiIf(entry_step = ${i}, t_entry, entry_step > ${i} or ${previous} is null or empty(s${i}), null,
                    length(s${i}) = 1, if(s${i}[1] >= ${previous} and s${i}[1] <= t_entry + ${window}, s${i}[1], null),
                    notEmpty(${inWindow}), arrayMin(${inWindow}), null) as t${i}
  from ${from}
)`;
    });
  }

  /** One path per entrant: entry step and attributes, when each step was reached, and g_i, the seconds from step i-1 to step i. */
  pathsCte(): string {
    const gaps = this.steps.slice(1).map((i) => `(t${i} - t${i - 1}) / 1e6 as g${i}`);
    return `paths as (
  select platform, entry_step, entry_version${this.dims.map((d) => `, entry_${d.alias}`).join('')},
         ${this.steps.map((i) => `t${i}`).join(', ')}, ${gaps.join(', ')}
  from reach_${this.steps.length - 1}
)`;
  }

  /**
   * Per platform, entry version and dimension values (few combinations):
   * entrants and reach per step, and the step times below the cap.
   */
  pathGroupsCte(): string {
    const cap = this.p.add(this.flow.stepTimeCapSeconds, 'Float64');
    const attributes = ['entry_version', ...this.dims.map((d) => `entry_${d.alias}`)].join(', ');
    return `path_groups as (
  select platform, ${attributes},
         ${this.perStep((i) => `countIf(entry_step = ${i})`)} as entered,
         ${this.perStep((i) => `count(t${i})`)} as reached,
         ${this.steps.slice(1).map((i) => `groupArrayIf(g${i}, g${i} <= ${cap}) as kept${i}`).join(',\n         ')}
  from paths
  group by platform, ${attributes}
)`;
  }

  /** The path groups merged per platform x version, platform, and platform x dimension value; step times sorted. */
  funnelCellsCte(): string {
    const cells = [`(entry_version, '', '')`, `('*', '', '')`, ...this.dims.map((d) => `('*', ${this.p.add(d.name, 'String')}, entry_${d.alias})`)];
    return `funnel_cells as (
  select platform, cell.1 as version, cell.2 as dimension, cell.3 as value,
         sumForEach(entered) as entered_all, sumForEach(reached) as reached_all,
         ${this.steps.slice(1).map((i) => `arraySort(groupArrayArray(kept${i})) as sorted${i}`).join(',\n         ')}
  from path_groups
  array join [${cells.join(', ')}] as cell
  group by platform, version, dimension, value
)`;
  }

  perStep(fn: (i: number) => string): string {
    return `[${this.steps.map(fn).join(', ')}]`;
  }

  funnelRows(): string {
    const later = (fn: (i: number) => string, first: string) => this.perStep((i) => (i === 0 ? first : fn(i)));
    return `select 'funnel' as kind, platform, version, dimension, value, entered_all as entered, reached_all as reached,
  ${later((i) => percentileCont(0.5, `sorted${i}`), 'null')} as seconds_median,
  ${later((i) => percentileCont(0.9, `sorted${i}`), 'null')} as seconds_p90,
  ${later((i) => `length(sorted${i})`, '0')} as timed
from funnel_cells`;
  }
}

/**
 * percentile_cont(level) of a sorted array, null when empty: the value at
 * position level * (n - 1), interpolated linearly between its neighbours with
 * PostgreSQL's arithmetic (lo + (hi - lo) * fraction).
 */
function percentileCont(level: number, sorted: string): string {
  const position = `${level} * (length(${sorted}) - 1)`;
  const below = `${sorted}[toUInt64(floor(${position})) + 1]`;
  const above = `${sorted}[toUInt64(ceil(${position})) + 1]`;
  return `if(empty(${sorted}), null, ${below} + (${above} - ${below}) * (${position} - floor(${position})))`;
}

/**
 * A parameter's value as text, in one pass over the JSON: strings unquoted,
 * booleans as true and false, null and absent keys as null, which never
 * matches; as PostgreSQL's `->>` gives them. Numbers are written by
 * ClickHouse (1.50 as 1.5) where PostgreSQL keeps the JSON's digits, so a
 * filter on a number sent with trailing zeros matches here and not there.
 */
function paramText(c: Columns, key: string): string {
  return `JSONExtract(${c.props}, ${key}, 'Nullable(String)')`;
}

/** The step's event and its `where` values, against the row's event and parameter texts (`param_k` for the k-th key of the flow). */
function stepCondition(p: ChParams, step: FlowStep, keys: string[]): string {
  const parts = [`event = ${p.add(step.event, 'String')}`];
  for (const [key, expected] of Object.entries(step.where)) {
    parts.push(`has(${p.add(whereValues(expected), 'Array(String)')}, param_${keys.indexOf(key)})`);
  }
  return `(${parts.join(' and ')})`;
}
