/**
 * Queries against the team's events table. Read-only: plumbline never writes
 * to the warehouse. Every query reads one business day [lo, hi) (plus the
 * conversion window after it for funnels) through a range on the time column,
 * so its cost follows the day's events, not the table's history. The table
 * needs an index (or partitioning) on that column.
 */
import type { FlowDefinition, FlowStep } from '../../checks/types.js';
import { Params, quoteIdent, quoteQualified, type Query } from '../db/sql.js';

export interface WarehouseMapping {
  table: string;
  columns: { time: string; name: string; user: string; device: string; platform: string; version: string; params: string };
  dimensions: string[];
  /** Our platform name -> raw values in the platform column. */
  platforms: Record<string, string[]>;
}

/** Platform value used for rows whose raw platform is not mapped in the config. */
export const UNMAPPED_PLATFORM = 'other';
/** Strings longer than this are cut in parameter value profiles. */
export const VALUE_MAX_LENGTH = 64;
/** How many top values are kept per parameter key. */
export const TOP_VALUES = 12;

/** Start and end of business day `day` in `timezone`: 23, 24 or 25 hours apart. */
export function dayBounds(day: string, timezone: string): Query {
  return {
    text: `select ($1::date)::timestamp at time zone $2 as lo, ($1::date + 1)::timestamp at time zone $2 as hi`,
    values: [day, timezone],
  };
}

/** Column expressions shared by every query: the mapping from the team's table to our roles. */
class Columns {
  constructor(
    readonly mapping: WarehouseMapping,
    readonly params: Params,
  ) {}
  col(role: keyof WarehouseMapping['columns']): string {
    return `e.${quoteIdent(this.mapping.columns[role])}`;
  }
  get time(): string {
    return this.col('time');
  }
  get name(): string {
    return this.col('name');
  }
  /** A person is the signed-in user, falling back to the device; prefixed so ids of both kinds never collide. */
  get person(): string {
    return `coalesce('u:' || ${this.col('user')}::text, 'd:' || ${this.col('device')}::text)`;
  }
  get version(): string {
    return `coalesce(${this.col('version')}::text, '')`;
  }
  get props(): string {
    return this.col('params');
  }
  get platform(): string {
    const arms = Object.entries(this.mapping.platforms).map(
      ([ours, raw]) => `when ${this.col('platform')}::text = any(${this.params.add(raw)}::text[]) then ${this.params.add(ours)}::text`,
    );
    return `case ${arms.join(' ')} else ${this.params.add(UNMAPPED_PLATFORM)}::text end`;
  }
  dimension(name: string): string {
    return `coalesce(e.${quoteIdent(name)}::text, '')`;
  }
  get table(): string {
    return `${quoteQualified(this.mapping.table)} e`;
  }
}

/**
 * Events and distinct people per event x platform x version, plus per event x
 * platform (all versions) and per event x platform x dimension value. One scan:
 * the inner grouping is the minimal (event, platform, version, person) pass;
 * everything else is derived from its much smaller result. A person counts once
 * per event under one value of each dimension (the lowest seen that day).
 */
export function eventCountsQuery(mapping: WarehouseMapping, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const dims = mapping.dimensions.map((name, i) => ({ name, alias: `d${i}` }));
  const dimSelect = dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('');
  // Byte order ("C" collation): the same answer whatever the warehouse's default collation.
  const dimMin = dims.map((d) => `, min(${d.alias} collate "C") as ${d.alias}`).join('');
  const perDimension = dims
    .map(
      (d) =>
        `union all select event, platform, '*', ${p.add(d.name)}::text, ${d.alias}, sum(n), count(person) from per_platform group by event, platform, ${d.alias}`,
    )
    .join('\n');
  const text = `
with per_version as (
  select event, platform, version, person, count(*) as n${dimMin}
  from (
    select ${c.name}::text as event, ${c.platform} as platform, ${c.version} as version, ${c.person} as person${dimSelect}
    from ${c.table}
    where ${c.time} >= ${p.add(lo)} and ${c.time} < ${p.add(hi)}
  ) r
  group by event, platform, version, person
),
per_platform as (
  select event, platform, person, sum(n) as n${dimMin}
  from per_version group by event, platform, person
)
select event, platform, version, '' as dimension, '' as value, sum(n) as events, count(person) as people from per_version group by event, platform, version
union all select event, platform, '*', '', '', sum(n), count(person) from per_platform group by event, platform
${perDimension}`;
  return { text, values: p.values };
}

/** Events per platform and local hour of the day, and the newest event: the freshness probe. */
export function dayStatusQuery(mapping: WarehouseMapping, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const from = p.add(lo);
  const text = `
select platform, hour, count(*) as events, max(at) as newest_at
from (
  select ${c.platform} as platform, ${c.time} as at,
         floor(extract(epoch from ${c.time} - ${from}::timestamptz) / 3600)::int as hour
  from ${c.table}
  where ${c.time} >= ${from} and ${c.time} < ${p.add(hi)}
) r
group by platform, hour`;
  return { text, values: p.values };
}

/** Event counts per platform for a range of past days, to spot late rows that restate them. */
export function restatementProbeQuery(mapping: WarehouseMapping, days: Array<{ day: string; lo: Date; hi: Date }>): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const text = `
select b.day::text as day, ${c.platform} as platform, count(*) as events
from unnest(${p.add(days.map((d) => d.day))}::date[], ${p.add(days.map((d) => d.lo))}::timestamptz[], ${p.add(days.map((d) => d.hi))}::timestamptz[]) as b(day, lo, hi)
join ${c.table} on ${c.time} >= b.lo and ${c.time} < b.hi
group by b.day, platform`;
  return { text, values: p.values };
}

/** Keys with more distinct values than this in a day are not value-profiled from then on. */
export const LOW_CARDINALITY = 50;

/**
 * Parameter profile per event x platform x version x key x JSON type: how many
 * events carry the key with that type, and for keys with few distinct values
 * the values with their counts. Keys listed in `untrackedKeys` ("event.key",
 * known to have many distinct values: amounts, session ids) are counted but
 * their values are not grouped, which would cost a hash entry per row.
 */
export function paramProfileQuery(mapping: WarehouseMapping, lo: Date, hi: Date, events: string[], untrackedKeys: string[]): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const text = `
with kv as (
  select r.event, r.platform, r.version, kv.key, jsonb_typeof(kv.value) as json_type,
         (r.event || '.' || kv.key) <> all(${p.add(untrackedKeys)}::text[]) as tracked,
         kv.value,
         case when jsonb_typeof(kv.value) = 'number' then (kv.value)::float8 end as number
  from (
    select ${c.name}::text as event, ${c.platform} as platform, ${c.version} as version, ${c.props} as props
    from ${c.table}
    where ${c.time} >= ${p.add(lo)} and ${c.time} < ${p.add(hi)} and ${c.name}::text = any(${p.add(events)}::text[])
      and jsonb_typeof(${c.props}) = 'object'
  ) r
  cross join lateral jsonb_each(r.props) as kv(key, value)
),
grouped as (
  select event, platform, version, key, json_type, tracked,
         case when tracked and json_type in ('string', 'number', 'boolean') then left(value #>> '{}', ${VALUE_MAX_LENGTH}) end as value,
         count(*) as n, min(number) as min_number, max(number) as max_number,
         count(*) filter (where number <> trunc(number)) as fractional
  from kv group by 1, 2, 3, 4, 5, 6, 7
),
totals as (
  select event, platform, version, key, json_type, bool_and(tracked) as tracked, sum(n) as events, count(value) as distinct_values,
         min(min_number) as min_number, max(max_number) as max_number, sum(fractional) as fractional
  from grouped group by 1, 2, 3, 4, 5
),
tops as (
  select event, platform, version, key, json_type,
         jsonb_agg(jsonb_build_object('value', value, 'events', n) order by rank) as top_values
  from (
    select *, row_number() over (partition by event, platform, version, key, json_type order by n desc, value collate "C") as rank
    from grouped where value is not null
  ) r
  where rank <= ${TOP_VALUES}
  group by 1, 2, 3, 4, 5
)
select t.event, t.platform, t.version, t.key, t.json_type, t.events,
       case when t.tracked then t.distinct_values end as distinct_values,
       t.min_number, t.max_number, t.fractional,
       case when t.tracked and t.distinct_values <= ${LOW_CARDINALITY} then coalesce(tops.top_values, '[]'::jsonb) else '[]'::jsonb end as top_values
from totals t
left join tops using (event, platform, version, key, json_type)`;
  return { text, values: p.values };
}

/**
 * Events and distinct people matching each step's definition on the day, per
 * platform x version and per platform, whatever the order they came in: the
 * raw signal behind "android stopped sending rider_details views", which the
 * ordered funnel cannot separate from people leaving earlier.
 */
export function stepCountsQuery(mapping: WarehouseMapping, flow: FlowDefinition, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const stepArms = flow.steps.map((step, i) => `case when ${stepCondition(c, p, step)} then ${i} end`).join(', ');
  const eventNames = [...new Set(flow.steps.map((step) => step.event))];
  const text = `
with step_events as (
  select ${c.person} as person, ${c.platform} as platform, ${c.version} as version, s.step
  from ${c.table}
  cross join lateral unnest(array[${stepArms}]) as s(step)
  where ${c.time} >= ${p.add(lo)} and ${c.time} < ${p.add(hi)}
    and ${c.name}::text = any(${p.add(eventNames)}::text[])
    and s.step is not null
)
select platform, case when grouping(version) = 0 then version else '*' end as version, step,
       count(*) as events, count(distinct person) as people
from step_events
group by grouping sets ((platform, version, step), (platform, step))`;
  return { text, values: p.values };
}

function stepCondition(c: Columns, p: Params, step: FlowStep): string {
  const parts = [`${c.name}::text = ${p.add(step.event)}::text`];
  for (const [key, expected] of Object.entries(step.where)) {
    const values = (Array.isArray(expected) ? expected : [expected]).map(String);
    parts.push(`${c.props} ->> ${p.add(key)}::text = any(${p.add(values)}::text[])`);
  }
  return `(${parts.join(' and ')})`;
}

/**
 * The funnel of one flow for the cohort entering on the day: per platform x
 * version (and per platform x dimension value), people entering and reaching
 * each step, and step-to-step time median and 90th percentile.
 *
 * Matching is exact and ordered, per person and platform: the entry is the
 * person's first step-1 event of the day (`first_step_only`) or first event of
 * any step (`any_step`); each following step is the earliest event of that step
 * at or after the previous step's time and within the conversion window from
 * the entry. The scan reads the day plus the window after it. Version and
 * dimension values are those of the entry event. Step times above the cap are
 * left out of the timing statistics (not out of the conversion).
 */
export function funnelQuery(mapping: WarehouseMapping, flow: FlowDefinition, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const steps = flow.steps.map((_, i) => i);
  const window = p.add(`${flow.conversionWindowSeconds} seconds`);
  const cap = p.add(flow.stepTimeCapSeconds);
  const loP = p.add(lo);
  const hiP = p.add(hi);
  const dims = mapping.dimensions.map((name, i) => ({ name, alias: `d${i}` }));
  const stepArms = flow.steps.map((step, i) => `case when ${stepCondition(c, p, step)} then ${i} end`).join(', ');
  const eventNames = [...new Set(flow.steps.map((step) => step.event))];

  // Arrays of each step's event times per person and platform, and the entry event's attributes.
  const entryFilter =
    flow.entry === 'first_step_only' ? `step = 0 and at >= ${loP} and at < ${hiP}` : `at >= ${loP} and at < ${hiP}`;
  const arrays = steps.map((i) => `, array_agg(at order by at) filter (where step = ${i}) as s${i}`).join('');
  // Ties at the entry time resolve to the lowest step, then the lowest value, so results never depend on row order.
  const entryAttrs = [
    `(array_agg(version order by at, step, version collate "C") filter (where ${entryFilter}))[1] as version`,
    `(array_agg(step order by at, step) filter (where ${entryFilter}))[1] as entry_step`,
    `min(at) filter (where ${entryFilter}) as t_entry`,
    ...dims.map((d) => `(array_agg(${d.alias} order by at, step, ${d.alias} collate "C") filter (where ${entryFilter}))[1] as ${d.alias}`),
  ].join(',\n         ');

  // t_i: when the person reached step i (null when not reached), chained through lateral joins.
  const chain = steps
    .map((i) => {
      const previous = i === 0 ? null : `m${i - 1}.t${i - 1}`;
      const reach =
        i === 0
          ? `case when j.entry_step = 0 then j.t_entry end`
          : `case when j.entry_step = ${i} then j.t_entry
                  when j.entry_step < ${i} and ${previous} is not null then
                    (select min(x) from unnest(j.s${i}) x where x >= ${previous} and x <= j.t_entry + ${window}::interval)
             end`;
      // offset 0 keeps the planner from inlining the chain, which would copy each earlier step into every later one.
      return `cross join lateral (select ${reach} as t${i} offset 0) m${i}`;
    })
    .join('\n  ');
  const reachedCols = steps.map((i) => `m${i}.t${i}`).join(', ');
  const gapCols = steps
    .map((i) => (i === 0 ? `null::double precision as g0` : `extract(epoch from m${i}.t${i} - m${i - 1}.t${i - 1})::double precision as g${i}`))
    .join(', ');

  const perStep = (fn: (i: number) => string) => `array[${steps.map(fn).join(', ')}]`;
  const aggregates = [
    `${perStep((i) => `count(*) filter (where entry_step = ${i})`)} as entered`,
    `${perStep((i) => `count(t${i})`)} as reached`,
    `${perStep((i) => (i === 0 ? 'null::double precision' : `percentile_cont(0.5) within group (order by g${i}) filter (where g${i} <= ${cap})`))} as seconds_median`,
    `${perStep((i) => (i === 0 ? 'null::double precision' : `percentile_cont(0.9) within group (order by g${i}) filter (where g${i} <= ${cap})`))} as seconds_p90`,
    `${perStep((i) => (i === 0 ? '0::bigint' : `count(g${i}) filter (where g${i} <= ${cap})`))} as timed`,
  ].join(',\n  ');
  const groupings = [`(platform, version)`, `(platform)`, ...dims.map((d) => `(platform, ${d.alias})`)].join(', ');
  const dimensionLabel = dims.length
    ? `case ${dims.map((d) => `when grouping(${d.alias}) = 0 then ${p.add(d.name)}::text`).join(' ')} else '' end`
    : `''`;
  const valueLabel = dims.length ? `coalesce(${dims.map((d) => `case when grouping(${d.alias}) = 0 then ${d.alias} end`).join(', ')}, '')` : `''`;
  const dimSelect = dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('');

  const text = `
with step_events as (
  select ${c.person} as person, ${c.platform} as platform, ${c.version} as version, ${c.time} as at, s.step${dimSelect}
  from ${c.table}
  cross join lateral unnest(array[${stepArms}]) as s(step)
  where ${c.time} >= ${loP} and ${c.time} < ${hiP}::timestamptz + ${window}::interval
    and ${c.name}::text = any(${p.add(eventNames)}::text[])
    and s.step is not null
    and ${c.person} is not null
),
journeys as (
  select person, platform${arrays},
         ${entryAttrs}
  from step_events
  group by person, platform
),
paths as (
  select j.platform, j.version, j.entry_step${dims.map((d) => `, j.${d.alias}`).join('')}, ${reachedCols}, ${gapCols}
  from journeys j
  ${chain}
  where j.t_entry is not null
)
select platform,
  case when grouping(version) = 0 then version else '*' end as version,
  ${dimensionLabel} as dimension,
  ${valueLabel} as value,
  ${aggregates}
from paths
group by grouping sets (${groupings})`;
  return { text, values: p.values };
}
