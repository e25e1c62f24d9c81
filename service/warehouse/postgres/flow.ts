/**
 * The PostgreSQL dialect of the flow statement: one flow on the day, its
 * funnel rows (`kind = 'funnel'`) and its step count rows (`kind = 'step'`),
 * both from one scan of the flow's step events, kept once as a materialized
 * CTE. The statement is put together from one builder per CTE.
 *
 * Funnel matching is exact and ordered, per person and platform: the entry is
 * the person's first step-1 event of the day (`first_step_only`) or first
 * event of any step (`any_step`); each following step is the earliest event of
 * that step at or after the previous step's time and within the conversion
 * window from the entry. The scan reads the day plus the window after it.
 * Version and dimension values are those of the entry event; ties at the entry
 * time resolve to the lowest step, then the lowest value (byte order), so
 * results never depend on row order. Step times above the cap are left out of
 * the timing statistics (not out of the conversion).
 *
 * Cost: one scan, and one grouping of the step events per person and platform
 * with plain (unordered) aggregates that feeds both kinds: each step's times
 * (the chain takes minimums), the entry candidates' attributes (most people
 * have one candidate), and each step's events on the day with the range of
 * versions they came from. A person who used one version that day counts
 * under it; people with several (an upgrade, a second device) are counted
 * from their rows in the CTE.
 */
import type { FlowDefinition, FlowStep } from '../../../checks/types.js';
import { Params, type Query } from '../../db/sql.js';
import type { DayRange } from '../engine.js';
import { dimensionAliases, stepsExclusive, whereValues, type WarehouseMapping } from '../mapping.js';
import { Columns } from './columns.js';

export function flowQuery(mapping: WarehouseMapping, flow: FlowDefinition, range: DayRange): Query {
  const p = new Params();
  const f = new FlowParts(mapping, flow, p, range);
  const text = `
with ${[f.stepEventsCte(), f.journeysCte(), f.pathsCte(), f.stepCellsCte(), f.stepRowsCte()].join(',\n')}
${f.funnelRows()}
union all
${f.stepRows()}`;
  return { text, values: p.values };
}

/** The flow's pieces and one builder per CTE of `flowQuery`. */
class FlowParts {
  readonly c: Columns;
  readonly steps: number[];
  readonly dims;
  readonly anyStep: boolean;
  readonly window: string;
  readonly lo: string;
  readonly hi: string;
  /** Entry candidates' attributes, read from arrays: the only element for most people. */
  readonly candidates: Array<{ alias: string }>;

  constructor(
    mapping: WarehouseMapping,
    readonly flow: FlowDefinition,
    readonly p: Params,
    range: DayRange,
  ) {
    this.c = new Columns(mapping, p);
    this.steps = flow.steps.map((_, i) => i);
    this.dims = dimensionAliases(mapping);
    this.anyStep = flow.entry === 'any_step';
    this.window = p.add(`${flow.conversionWindowSeconds} seconds`);
    this.lo = p.add(range.lo);
    this.hi = p.add(range.hi);
    this.candidates = [{ alias: 'at' }, ...(this.anyStep ? [{ alias: 'step' }] : []), { alias: 'version' }, ...this.dims];
  }

  /** The flow's step events of the day and the window after it: one CASE per row when steps cannot overlap, otherwise one row per matching step. */
  stepEventsCte(): string {
    const { c, p, flow } = this;
    const conditions = flow.steps.map((step) => stepCondition(c, p, step));
    const exclusive = stepsExclusive(flow.steps);
    const stepExpr = exclusive ? `case ${conditions.map((cond, i) => `when ${cond} then ${i}`).join(' ')} end` : 's.step';
    const stepJoin = exclusive ? '' : `cross join lateral unnest(array[${conditions.map((cond, i) => `case when ${cond} then ${i} end`).join(', ')}]) as s(step)`;
    const eventNames = [...new Set(flow.steps.map((step) => step.event))];
    return `step_events as materialized (
  select * from (
    select ${c.person} as person, ${c.platform} as platform, ${c.version} as version, ${c.time} as at, ${stepExpr} as step${this.dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('')}
    from ${c.table}
    ${stepJoin}
    where ${c.time} >= ${this.lo} and ${c.time} < ${this.hi}::timestamptz + ${this.window}::interval
      and ${c.name}::text = any(${p.add(eventNames)}::text[])
    offset 0
  ) r
  where step is not null
)`;
  }

  /** Per person and platform: each step's times, the entry candidates, and the day's step events with their versions. */
  journeysCte(): string {
    const entryFilter = this.anyStep ? `at < ${this.hi}` : `step = 0 and at < ${this.hi}`;
    // With first_step_only the entry is step 0's time; its other times are never needed.
    const arraySteps = this.anyStep ? this.steps : this.steps.slice(1);
    const aggregates = [
      ...arraySteps.map((i) => `array_agg(at) filter (where step = ${i}) as s${i}`),
      `min(at) filter (where ${entryFilter}) as t_entry`,
      ...this.candidates.map((a) => `array_agg(${a.alias}) filter (where ${entryFilter}) as e_${a.alias}`),
      // For the step counts: the person's events of each step on the day, and the versions they came from.
      ...this.steps.map((i) => `count(*) filter (where step = ${i} and at < ${this.hi})::int as n${i}`),
      `min(version) filter (where at < ${this.hi}) as day_version_lo`,
      `max(version) filter (where at < ${this.hi}) as day_version_hi`,
    ];
    return `journeys as (
  select person, platform,
         ${aggregates.join(',\n         ')}
  from step_events
  group by person, platform
)`;
  }

  /** One path per entrant: entry step and attributes, when each step was reached, and the step-to-step times. */
  pathsCte(): string {
    const entryStep = this.anyStep ? `case ${this.steps.map((i) => `when j.t_entry = any(j.s${i}) then ${i}`).join(' ')} end` : '0';
    const attributes = [{ alias: 'version' }, ...this.dims].map((d) => `${this.entryAttribute(d.alias)} as ${d.alias}`);
    const reached = this.steps.map((i) => `m${i}.t${i}`);
    const gaps = this.steps.map((i) =>
      i === 0 ? `null::double precision as g0` : `extract(epoch from m${i}.t${i} - m${i - 1}.t${i - 1})::double precision as g${i}`,
    );
    return `paths as (
  select j.platform, a.entry_step, ${attributes.join(',\n         ')},
         ${reached.join(', ')}, ${gaps.join(', ')}
  from journeys j
  cross join lateral (select ${entryStep} as entry_step offset 0) a
  ${this.steps.map((i) => this.reachJoin(i)).join('\n  ')}
  where j.t_entry is not null and j.person is not null
)`;
  }

  /** An entry attribute; ties at the entry time resolve to the lowest step, then the lowest value of each attribute (byte order). */
  entryAttribute(alias: string): string {
    const tied = this.anyStep ? `u.at = j.t_entry and u.step = a.entry_step` : `u.at = j.t_entry`;
    const arrays = this.candidates.map((a) => `j.e_${a.alias}`).join(', ');
    const names = this.candidates.map((a) => a.alias).join(', ');
    return `case when cardinality(j.e_at) = 1 then j.e_${alias}[1]
          else (select min(u.${alias} collate "C") from unnest(${arrays}) as u(${names}) where ${tied}) end`;
  }

  /**
   * t_i: when the person reached step i (null when not reached), chained
   * through lateral joins; offset 0 keeps the planner from inlining the chain,
   * which would copy each earlier step into every later one.
   */
  reachJoin(i: number): string {
    const previous = `m${i - 1}.t${i - 1}`;
    const deadline = `j.t_entry + ${this.window}::interval`;
    const reach =
      i === 0
        ? `case when a.entry_step = 0 then j.t_entry end`
        : `case when a.entry_step = ${i} then j.t_entry
                  when a.entry_step < ${i} and ${previous} is not null and j.s${i} is not null then
                    case when cardinality(j.s${i}) = 1
                         then case when j.s${i}[1] >= ${previous} and j.s${i}[1] <= ${deadline} then j.s${i}[1] end
                         else (select min(x) from unnest(j.s${i}) x where x >= ${previous} and x <= ${deadline}) end
             end`;
    return `cross join lateral (select ${reach} as t${i} offset 0) m${i}`;
  }

  stepCellsCte(): string {
    return `-- Step counts per platform, and per version for people who used one version that day (version null otherwise).
step_cells as (
  select platform, case when grouping(version) = 0 then version else '*' end as version,
         ${this.perStep((i) => `sum(n${i})`)} as events,
         ${this.perStep((i) => `count(person) filter (where n${i} > 0)`)} as people
  from (select j.*, case when day_version_lo = day_version_hi then day_version_lo end as version from journeys j) j
  group by grouping sets ((platform, version), (platform))
)`;
  }

  /** Step count rows: from the cells, plus the people with several versions counted from their events. */
  stepRowsCte(): string {
    return `step_rows as (
  select c.platform, c.version, s.step::int - 1 as step, s.events, s.people
  from step_cells c
  cross join lateral unnest(c.events, c.people) with ordinality as s(events, people, step)
  where c.version is not null and s.events > 0
  union all
  select platform, version, step, count(*), count(distinct person)
  from step_events
  where at < ${this.hi}
    and (coalesce(person, ''), platform) in (select coalesce(person, ''), platform from journeys where day_version_lo <> day_version_hi)
  group by platform, version, step
)`;
  }

  /** Funnel rows per platform x version, per platform, and per platform x dimension value. */
  funnelRows(): string {
    const groupings = [`(platform, version)`, `(platform)`, ...this.dims.map((d) => `(platform, ${d.alias})`)].join(', ');
    const dimensionLabel = this.dims.length
      ? `case ${this.dims.map((d) => `when grouping(${d.alias}) = 0 then ${this.p.add(d.name)}::text`).join(' ')} else '' end`
      : `''`;
    const valueLabel = this.dims.length ? `coalesce(${this.dims.map((d) => `case when grouping(${d.alias}) = 0 then ${d.alias} end`).join(', ')}, '')` : `''`;
    return `select 'funnel'::text as kind, platform,
  case when grouping(version) = 0 then version else '*' end as version,
  ${dimensionLabel} as dimension,
  ${valueLabel} as value,
  ${this.funnelAggregates().join(',\n  ')},
  null::int as step, null::numeric as events, null::numeric as people
from paths
group by grouping sets (${groupings})`;
  }

  /** Entered, reached, and the step times' median and 90th percentile (exact, percentile_cont) below the cap. */
  funnelAggregates(): string[] {
    const cap = this.p.add(this.flow.stepTimeCapSeconds);
    const percentile = (level: number) => (i: number) =>
      i === 0 ? 'null::double precision' : `percentile_cont(${level}) within group (order by g${i}) filter (where g${i} <= ${cap})`;
    return [
      `${this.perStep((i) => `count(*) filter (where entry_step = ${i})`)} as entered`,
      `${this.perStep((i) => `count(t${i})`)} as reached`,
      `${this.perStep(percentile(0.5))} as seconds_median`,
      `${this.perStep(percentile(0.9))} as seconds_p90`,
      `${this.perStep((i) => (i === 0 ? '0::bigint' : `count(g${i}) filter (where g${i} <= ${cap})`))} as timed`,
    ];
  }

  stepRows(): string {
    return `select 'step'::text as kind, platform, version, '' as dimension, '' as value,
  null::bigint[] as entered, null::bigint[] as reached, null::float8[] as seconds_median, null::float8[] as seconds_p90, null::bigint[] as timed,
  step, sum(events) as events, sum(people) as people
from step_rows group by platform, version, step`;
  }

  perStep(fn: (i: number) => string): string {
    return `array[${this.steps.map(fn).join(', ')}]`;
  }
}

function stepCondition(c: Columns, p: Params, step: FlowStep): string {
  const parts = [`${c.name}::text = ${p.add(step.event)}::text`];
  for (const [key, expected] of Object.entries(step.where)) {
    parts.push(`${c.props} ->> ${p.add(key)}::text = any(${p.add(whereValues(expected))}::text[])`);
  }
  return `(${parts.join(' and ')})`;
}
