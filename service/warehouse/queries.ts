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

/**
 * Column expressions shared by every query: the mapping from the team's table
 * to our roles. Text roles carry the "C" collation: equality is unchanged, and
 * sorts on them (grouping, ordered aggregates) compare bytes instead of calling
 * the server's locale, which is several times slower.
 */
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
    return `(${this.col('name')}::text collate "C")`;
  }
  /** A person is the signed-in user, falling back to the device; prefixed so ids of both kinds never collide. */
  get person(): string {
    return `(coalesce('u:' || ${this.col('user')}::text, 'd:' || ${this.col('device')}::text) collate "C")`;
  }
  get version(): string {
    return `(coalesce(${this.col('version')}::text, '') collate "C")`;
  }
  get props(): string {
    return this.col('params');
  }
  get platform(): string {
    return this.platformOf(`${this.col('platform')}::text`);
  }
  /** Our platform name for a raw platform value: per row, or once per group when grouped by the raw value first. */
  platformOf(raw: string): string {
    const arms = Object.entries(this.mapping.platforms).map(([ours, values]) => `when ${raw} = any(${this.params.add(values)}::text[]) then ${this.params.add(ours)}::text`);
    return `(case ${arms.join(' ')} else ${this.params.add(UNMAPPED_PLATFORM)}::text end collate "C")`;
  }
  dimension(name: string): string {
    return `(coalesce(e.${quoteIdent(name)}::text, '') collate "C")`;
  }
  get table(): string {
    return `${quoteQualified(this.mapping.table)} e`;
  }
}

/**
 * Events and distinct people per event x platform x version, plus per event x
 * platform (all versions) and per event x platform x dimension value. A person
 * counts once per event under one value of each dimension (the lowest seen
 * that day, byte order).
 *
 * One hash grouping of the day's rows per event x platform x person (the
 * grain of the minimal grouped pass, less the version), carrying the person's
 * event count, lowest and highest version and lowest dimension values (byte
 * order, as every text role is "C"); everything else is derived
 * from its result through one small grouping ("cells"). A person who sent one
 * event from several versions that day (an upgrade, a second device) counts
 * once under each: only their rows are grouped again, from a second read of
 * the day that PostgreSQL skips when there are no such people.
 */
export function eventCountsQuery(mapping: WarehouseMapping, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const dims = mapping.dimensions.map((name, i) => ({ name, alias: `d${i}` }));
  const loP = p.add(lo);
  const hiP = p.add(hi);
  const dayRows = (withDims: boolean) => `
    select ${c.name} as event, ${c.platform} as platform, ${c.version} as version, ${c.person} as person${withDims ? dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('') : ''}
    from ${c.table}
    where ${c.time} >= ${loP} and ${c.time} < ${hiP}`;
  const dimCols = dims.map((d) => `, ${d.alias}`).join('');
  const perDimension = dims
    .map((d) => `union all select event, platform, '*', ${p.add(d.name)}::text, ${d.alias}, sum(n), sum(people) from cells group by event, platform, ${d.alias}`)
    .join('\n');
  const text = `
with per_person as (
  select event, platform, person, count(*)::int as n, min(version) as version_lo, max(version) as version_hi${dims.map((d) => `, min(${d.alias}) as ${d.alias}`).join('')}
  from (${dayRows(true)}
  ) r
  group by event, platform, person
),
-- One cell per event, platform, version and dimension values; people with several versions get a cell each.
cells as (
  select event, platform, version, several${dimCols}, sum(n) as n, count(person) as people
  from (
    select per_person.*,
           case when version_lo = version_hi then version_lo end as version,
           case when version_lo <> version_hi then coalesce(person, '') end as several
    from per_person
  ) s
  group by event, platform, version, several${dimCols}
),
several_versions as (
  select event, platform, version, count(*) as n, count(distinct person) as people
  from (${dayRows(false)}
  ) r
  where (event, platform, coalesce(person, '')) in (select event, platform, several from cells where several is not null)
  group by event, platform, version
)
select event, platform, version, '' as dimension, '' as value, sum(n) as events, sum(people) as people
from (
  select event, platform, version, n, people from cells where version is not null
  union all select event, platform, version, n, people from several_versions
) v
group by event, platform, version
union all select event, platform, '*', '', '', sum(n), sum(people) from cells group by event, platform
${perDimension}`;
  return { text, values: p.values };
}

/**
 * Events per platform and local hour of the day, and the newest event: the
 * freshness probe. Rows are grouped by the raw platform value and a date_bin
 * of the time from the day's start (plain timestamp arithmetic per row); the
 * platform mapping and the hour index are computed per group.
 */
export function dayStatusQuery(mapping: WarehouseMapping, lo: Date, hi: Date): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const from = p.add(lo);
  const text = `
select ${c.platformOf('raw_platform')} as platform, floor(extract(epoch from bin - ${from}::timestamptz) / 3600)::int as hour,
       sum(events) as events, max(newest_at) as newest_at
from (
  select ${c.col('platform')}::text as raw_platform, date_bin('1 hour', ${c.time}, ${from}::timestamptz) as bin, count(*) as events, max(${c.time}) as newest_at
  from ${c.table}
  where ${c.time} >= ${from} and ${c.time} < ${p.add(hi)}
  group by raw_platform, bin
) g
group by 1, bin`;
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
  // "event.key" entries become key lists per watched event (every split at a dot, as names may hold dots), so no string is built per pair.
  const untracked = new Map<string, string[]>();
  for (const entry of untrackedKeys) {
    for (let dot = entry.indexOf('.'); dot >= 0; dot = entry.indexOf('.', dot + 1)) {
      const event = entry.slice(0, dot);
      if (events.includes(event)) untracked.set(event, [...(untracked.get(event) ?? []), entry.slice(dot + 1)]);
    }
  }
  const tracked = untracked.size
    ? `case ${[...untracked].map(([event, keys]) => `when r.event = ${p.add(event)}::text then kv.key <> all(${p.add(keys)}::text[])`).join(' ')} else true end`
    : 'true';
  // Grouped first by the raw platform value; the mapping then runs once per group.
  const text = `
with kv as (
  select r.event, r.raw_platform, r.version, kv.key, jsonb_typeof(kv.value) as json_type,
         ${tracked} as tracked,
         kv.value
  from (
    select ${c.name} as event, ${c.col('platform')}::text as raw_platform, ${c.version} as version, ${c.props} as props
    from ${c.table}
    where ${c.time} >= ${p.add(lo)} and ${c.time} < ${p.add(hi)} and ${c.name} = any(${p.add(events)}::text[])
      and jsonb_typeof(${c.props}) = 'object'
  ) r
  cross join lateral jsonb_each(r.props) as kv(key, value)
),
raw_grouped as (
  select event, raw_platform, version, key, json_type, tracked,
         case when tracked and json_type in ('string', 'number', 'boolean') then left(value #>> '{}', ${VALUE_MAX_LENGTH}) end as value,
         count(*) as n, min(number) as min_number, max(number) as max_number,
         count(*) filter (where number <> trunc(number)) as fractional
  from (select kv.*, case when json_type = 'number' then (value)::float8 end as number from kv) k
  group by 1, 2, 3, 4, 5, 6, 7
),
grouped as (
  select event, ${c.platformOf('raw_platform')} as platform, version, key, json_type, tracked, value,
         sum(n) as n, min(min_number) as min_number, max(max_number) as max_number, sum(fractional) as fractional
  from raw_grouped
  group by 1, 2, 3, 4, 5, 6, 7
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
 * ordered funnel cannot separate from people leaving earlier. The step rows of
 * `flowQuery`.
 */
export function stepCountsQuery(mapping: WarehouseMapping, flow: FlowDefinition, lo: Date, hi: Date): Query {
  const { text, values } = flowQuery(mapping, flow, lo, hi, 'step');
  return { text: `select platform, version, step, events, people from (${text}) f`, values };
}

/**
 * The funnel of one flow for the cohort entering on the day: per platform x
 * version (and per platform x dimension value), people entering and reaching
 * each step, and step-to-step time median and 90th percentile. The funnel rows
 * of `flowQuery`, which describes the matching.
 */
export function funnelQuery(mapping: WarehouseMapping, flow: FlowDefinition, lo: Date, hi: Date): Query {
  const { text, values } = flowQuery(mapping, flow, lo, hi, 'funnel');
  return { text: `select platform, version, dimension, value, entered, reached, seconds_median, seconds_p90, timed from (${text}) f`, values };
}

function stepCondition(c: Columns, p: Params, step: FlowStep): string {
  const parts = [`${c.name}::text = ${p.add(step.event)}::text`];
  for (const [key, expected] of Object.entries(step.where)) {
    parts.push(`${c.props} ->> ${p.add(key)}::text = any(${p.add(whereValues(expected))}::text[])`);
  }
  return `(${parts.join(' and ')})`;
}

function whereValues(expected: FlowStep['where'][string]): string[] {
  return (Array.isArray(expected) ? expected : [expected]).map(String);
}

/** True when no event can match two steps: their event names differ, or a key both filter on has no value in common. */
function stepsExclusive(steps: FlowStep[]): boolean {
  return steps.every((a, i) =>
    steps.slice(i + 1).every((b) => {
      if (a.event !== b.event) return true;
      return Object.entries(a.where).some(([key, expected]) => {
        if (!(key in b.where)) return false;
        const theirs = new Set(whereValues(b.where[key]!));
        return whereValues(expected).every((value) => !theirs.has(value));
      });
    }),
  );
}

/**
 * One flow on the day in one statement: its funnel rows (`kind = 'funnel'`)
 * and its step count rows (`kind = 'step'`), both from one scan of the flow's
 * step events, kept once as a materialized CTE. `only` leaves out the other
 * kind (PostgreSQL then skips the CTEs only it reads).
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
export function flowQuery(mapping: WarehouseMapping, flow: FlowDefinition, lo: Date, hi: Date, only?: 'funnel' | 'step'): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const steps = flow.steps.map((_, i) => i);
  const window = p.add(`${flow.conversionWindowSeconds} seconds`);
  const loP = p.add(lo);
  const hiP = p.add(hi);
  const dims = mapping.dimensions.map((name, i) => ({ name, alias: `d${i}` }));
  const anyStep = flow.entry === 'any_step';

  // One CASE per row when steps cannot overlap; otherwise one row per matching step.
  const conditions = flow.steps.map((step) => stepCondition(c, p, step));
  const exclusive = stepsExclusive(flow.steps);
  const stepExpr = exclusive ? `case ${conditions.map((cond, i) => `when ${cond} then ${i}`).join(' ')} end` : 's.step';
  const stepJoin = exclusive ? '' : `cross join lateral unnest(array[${conditions.map((cond, i) => `case when ${cond} then ${i} end`).join(', ')}]) as s(step)`;
  const eventNames = [...new Set(flow.steps.map((step) => step.event))];
  const dimSelect = dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('');

  const entryFilter = anyStep ? `at < ${hiP}` : `step = 0 and at < ${hiP}`;
  // With first_step_only the entry is step 0's time; its other times are never needed.
  const arraySteps = anyStep ? steps : steps.slice(1);
  // The entry's attributes are read from its candidates' arrays: the only element for most people.
  const candidates = [{ alias: 'at' }, ...(anyStep ? [{ alias: 'step' }] : []), { alias: 'version' }, ...dims];
  const journeyAggregates = [
    ...arraySteps.map((i) => `array_agg(at) filter (where step = ${i}) as s${i}`),
    `min(at) filter (where ${entryFilter}) as t_entry`,
    ...candidates.map((a) => `array_agg(${a.alias}) filter (where ${entryFilter}) as e_${a.alias}`),
    // For the step counts: the person's events of each step on the day, and the versions they came from.
    ...steps.map((i) => `count(*) filter (where step = ${i} and at < ${hiP})::int as n${i}`),
    `min(version) filter (where at < ${hiP}) as day_version_lo`,
    `max(version) filter (where at < ${hiP}) as day_version_hi`,
  ].join(',\n         ');
  const entryStep = anyStep ? `case ${steps.map((i) => `when j.t_entry = any(j.s${i}) then ${i}`).join(' ')} end` : '0';
  // Ties at the entry time resolve to the lowest step, then the lowest value of each attribute (byte order).
  const tied = anyStep ? `u.at = j.t_entry and u.step = a.entry_step` : `u.at = j.t_entry`;
  const entryAttr = (alias: string) =>
    `case when cardinality(j.e_at) = 1 then j.e_${alias}[1]
          else (select min(u.${alias} collate "C") from unnest(${candidates.map((a) => `j.e_${a.alias}`).join(', ')}) as u(${candidates.map((a) => a.alias).join(', ')}) where ${tied}) end`;

  // t_i: when the person reached step i (null when not reached), chained through lateral joins.
  const chain = steps
    .map((i) => {
      const previous = i === 0 ? null : `m${i - 1}.t${i - 1}`;
      const deadline = `j.t_entry + ${window}::interval`;
      const reach =
        i === 0
          ? `case when a.entry_step = 0 then j.t_entry end`
          : `case when a.entry_step = ${i} then j.t_entry
                  when a.entry_step < ${i} and ${previous} is not null and j.s${i} is not null then
                    case when cardinality(j.s${i}) = 1
                         then case when j.s${i}[1] >= ${previous} and j.s${i}[1] <= ${deadline} then j.s${i}[1] end
                         else (select min(x) from unnest(j.s${i}) x where x >= ${previous} and x <= ${deadline}) end
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
  // Built only when included: its parameters must not appear otherwise.
  const funnelRows = () => {
    const cap = p.add(flow.stepTimeCapSeconds);
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
    return `select 'funnel'::text as kind, platform,
  case when grouping(version) = 0 then version else '*' end as version,
  ${dimensionLabel} as dimension,
  ${valueLabel} as value,
  ${aggregates},
  null::int as step, null::numeric as events, null::numeric as people
from paths
group by grouping sets (${groupings})`;
  };
  const stepRows = `select 'step'::text as kind, platform, version, '' as dimension, '' as value,
  null::bigint[] as entered, null::bigint[] as reached, null::float8[] as seconds_median, null::float8[] as seconds_p90, null::bigint[] as timed,
  step, sum(events) as events, sum(people) as people
from step_rows group by platform, version, step`;
  const text = `
with step_events as materialized (
  select * from (
    select ${c.person} as person, ${c.platform} as platform, ${c.version} as version, ${c.time} as at, ${stepExpr} as step${dimSelect}
    from ${c.table}
    ${stepJoin}
    where ${c.time} >= ${loP} and ${c.time} < ${hiP}::timestamptz + ${window}::interval
      and ${c.name}::text = any(${p.add(eventNames)}::text[])
    offset 0
  ) r
  where step is not null
),
journeys as (
  select person, platform,
         ${journeyAggregates}
  from step_events
  group by person, platform
),
paths as (
  select j.platform, a.entry_step, ${[{ alias: 'version' }, ...dims].map((d) => `${entryAttr(d.alias)} as ${d.alias}`).join(',\n         ')},
         ${reachedCols}, ${gapCols}
  from journeys j
  cross join lateral (select ${entryStep} as entry_step offset 0) a
  ${chain}
  where j.t_entry is not null and j.person is not null
),
-- Step counts per platform, and per version for people who used one version that day (version null otherwise).
step_cells as (
  select platform, case when grouping(version) = 0 then version else '*' end as version,
         ${perStep((i) => `sum(n${i})`)} as events,
         ${perStep((i) => `count(person) filter (where n${i} > 0)`)} as people
  from (select j.*, case when day_version_lo = day_version_hi then day_version_lo end as version from journeys j) j
  group by grouping sets ((platform, version), (platform))
),
step_rows as (
  select c.platform, c.version, s.step::int - 1 as step, s.events, s.people
  from step_cells c
  cross join lateral unnest(c.events, c.people) with ordinality as s(events, people, step)
  where c.version is not null and s.events > 0
  union all
  select platform, version, step, count(*), count(distinct person)
  from step_events
  where at < ${hiP}
    and (coalesce(person, ''), platform) in (select coalesce(person, ''), platform from journeys where day_version_lo <> day_version_hi)
  group by platform, version, step
)
${[only !== 'step' ? funnelRows() : null, only !== 'funnel' ? stepRows : null].filter((part) => part !== null).join('\nunion all\n')}`;
  return { text, values: p.values };
}
