/**
 * The PostgreSQL dialect of the warehouse statements (the flow statement is
 * in flow.ts). Read-only: plumbline never writes to the warehouse. Every
 * statement reads one business day [lo, hi) through a range on the time
 * column, so its cost follows the day's events, not the table's history; the
 * table needs an index (or partitioning) on that column. Each builder returns
 * one `{ text, values }`; long statements are put together from named CTE
 * builders.
 */
import { Params, type Query } from '../../db/sql.js';
import type { DayRange } from '../engine.js';
import { BAD_ROW_REASONS, DOUBLE_UNDERFLOW, LOW_CARDINALITY, TOP_VALUES, VALUE_MAX_LENGTH, dimensionAliases, limitsOf, untrackedByEvent, type WarehouseMapping } from '../mapping.js';
import { Columns, cutText } from './columns.js';

/** Start and end of business day `day` in `timezone`: 23, 24 or 25 hours apart. */
export function dayBoundsQuery(day: string, timezone: string): Query {
  return {
    text: `select ($1::date)::timestamp at time zone $2 as lo, ($1::date + 1)::timestamp at time zone $2 as hi`,
    values: [day, timezone],
  };
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
 * order, as every text role is "C"); everything else is derived from its
 * result through one small grouping ("cells"). A person who sent one event
 * from several versions that day (an upgrade, a second device) counts once
 * under each: only their rows are grouped again, from a second read of the
 * day that PostgreSQL skips when there are no such people.
 *
 * Within the row limits (mapping.ts, ROW_LIMITS), per platform: the event
 * names (those in `keep` first), versions and values of each dimension with
 * the most events; each row carries how many distinct ones its platform had.
 */
export function eventCountsQuery(mapping: WarehouseMapping, range: DayRange, keep: string[] = []): Query {
  const p = new Params();
  const day = new CountsParts(mapping, p, range);
  const limits = limitsOf(mapping);
  const text = `
with ${[day.perPersonCte(), day.cellsCte(), day.severalVersionsCte(), `counted as (\n${day.countRows()}\n)`, countTotalsCte(), countRanksCte(p, keep), seenCte('ranked', ['event_rank', 'version_rank', 'value_rank'])].join(',\n')}
select event, platform, version, dimension, value, events, people, event_names, versions, dimension_values
from seen
where (event_rank <= ${p.add(limits.event_names)} or event = any(${p.add(keep)}::text[]))
  and coalesce(version_rank, 1) <= ${p.add(limits.versions)} and coalesce(value_rank, 1) <= ${p.add(limits.dimension_values)}`;
  return { text, values: p.values };
}

/** Events per event, per version and per dimension value of each platform: what the limits rank by. */
function countTotalsCte(): string {
  return `count_totals as (
  select c.*,
         sum(events) filter (where version = '*' and dimension = '') over (partition by platform, event) as event_total,
         sum(events) filter (where version <> '*' and dimension = '') over (partition by platform, version) as version_total,
         sum(events) over (partition by platform, dimension, value) as value_total
  from counted c
)`;
}

/** Ranks of each row's event (kept events first), version and dimension value on its platform: most events first, then byte order. */
function countRanksCte(p: Params, keep: string[]): string {
  return `ranked as (
  select t.*,
         dense_rank() over (partition by platform order by event = any(${p.add(keep)}::text[]) desc, event_total desc, event) as event_rank,
         case when version <> '*' and dimension = '' then dense_rank() over (partition by platform, version <> '*' and dimension = '' order by version_total desc, version) end as version_rank,
         case when dimension <> '' then dense_rank() over (partition by platform, dimension order by value_total desc, value) end as value_rank
  from count_totals t
)`;
}

/** Distinct values per platform: the highest rank of each kind, named after its limit. */
function seenCte(from: string, ranks: Array<'event_rank' | 'version_rank' | 'value_rank' | 'key_rank'>): string {
  const names = { event_rank: 'event_names', version_rank: 'versions', value_rank: 'dimension_values', key_rank: 'param_keys' };
  return `seen as (
  select r.*, ${ranks.map((rank) => `max(${rank}) over (partition by platform) as ${names[rank]}`).join(', ')}
  from ${from} r
)`;
}

/** The named CTEs of `eventCountsQuery`. */
class CountsParts {
  readonly c: Columns;
  readonly dims;
  readonly lo: string;
  readonly hi: string;
  constructor(
    mapping: WarehouseMapping,
    readonly p: Params,
    range: DayRange,
  ) {
    this.c = new Columns(mapping, p);
    this.dims = dimensionAliases(mapping);
    this.lo = p.add(range.lo);
    this.hi = p.add(range.hi);
  }

  /** The day's rows in our roles, with the dimension values when asked. */
  dayRows(withDims: boolean): string {
    const { c } = this;
    return `
    select ${c.name} as event, ${c.platform} as platform, ${c.version} as version, ${c.person} as person${withDims ? this.dims.map((d) => `, ${c.dimension(d.name)} as ${d.alias}`).join('') : ''}
    from ${c.table}
    where ${c.time} >= ${this.lo} and ${c.time} < ${this.hi} and ${c.named}`;
  }

  perPersonCte(): string {
    return `per_person as (
  select event, platform, person, count(*)::int as n, min(version) as version_lo, max(version) as version_hi${this.dims.map((d) => `, min(${d.alias}) as ${d.alias}`).join('')}
  from (${this.dayRows(true)}
  ) r
  group by event, platform, person
)`;
  }

  cellsCte(): string {
    const dimCols = this.dims.map((d) => `, ${d.alias}`).join('');
    return `-- One cell per event, platform, version and dimension values; people with several versions get a cell each.
cells as (
  select event, platform, version, several${dimCols}, sum(n) as n, count(person) as people
  from (
    select per_person.*,
           case when version_lo = version_hi then version_lo end as version,
           case when version_lo <> version_hi then coalesce(person, '') end as several
    from per_person
  ) s
  group by event, platform, version, several${dimCols}
)`;
  }

  severalVersionsCte(): string {
    return `several_versions as (
  select event, platform, version, count(*) as n, count(distinct person) as people
  from (${this.dayRows(false)}
  ) r
  where (event, platform, coalesce(person, '')) in (select event, platform, several from cells where several is not null)
  group by event, platform, version
)`;
  }

  countRows(): string {
    const perDimension = this.dims.map(
      (d) => `union all select event, platform, '*', ${this.p.add(d.name)}::text, ${d.alias}, sum(n), sum(people) from cells group by event, platform, ${d.alias}`,
    );
    return `select event, platform, version, '' as dimension, '' as value, sum(n) as events, sum(people) as people
from (
  select event, platform, version, n, people from cells where version is not null
  union all select event, platform, version, n, people from several_versions
) v
group by event, platform, version
union all select event, platform, '*', '', '', sum(n), sum(people) from cells group by event, platform
${perDimension.join('\n')}`;
  }
}

/**
 * Events per platform and local hour of the day, and the newest event: the
 * freshness status; with the day's bad rows per reason (BAD_ROW_REASONS),
 * each row under its first reason. Set-aside rows are not events. Rows are
 * grouped by the raw platform value and a date_bin of the time from the
 * day's start (plain timestamp arithmetic per row); the platform mapping and
 * the hour index are computed per group.
 */
export function hourCountsQuery(mapping: WarehouseMapping, range: DayRange, events: string[]): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const from = p.add(range.lo);
  const used = `reason is distinct from 'no_event_name'`;
  const text = `
select ${c.platformOf('raw_platform')} as platform, floor(extract(epoch from bin - ${from}::timestamptz) / 3600)::int as hour,
       sum(events) as events, max(newest_at) as newest_at${BAD_ROW_REASONS.map((r) => `, sum(${r}) as ${r}`).join('')}
from (
  select raw_platform, bin, count(*) filter (where ${used}) as events, max(at) filter (where ${used}) as newest_at${BAD_ROW_REASONS.map((r) => `, count(*) filter (where reason = '${r}') as ${r}`).join('')}
  from (
    select ${c.col('platform')}::text as raw_platform, date_bin('1 hour', ${c.time}, ${from}::timestamptz) as bin, ${c.time} as at,
           ${c.badRowReason(`${c.col('name')}::text = any(${p.add(events)}::text[])`)} as reason
    from ${c.table}
    where ${c.time} >= ${from} and ${c.time} < ${p.add(range.hi)}
  ) r
  group by raw_platform, bin
) g
group by 1, bin`;
  return { text, values: p.values };
}

/** Event counts per platform for a range of past days, to spot late rows that restate them. */
export function probeCountsQuery(mapping: WarehouseMapping, days: Array<{ day: string } & DayRange>): Query {
  const p = new Params();
  const c = new Columns(mapping, p);
  const text = `
select b.day::text as day, ${c.platform} as platform, count(*) as events
from unnest(${p.add(days.map((d) => d.day))}::date[], ${p.add(days.map((d) => d.lo))}::timestamptz[], ${p.add(days.map((d) => d.hi))}::timestamptz[]) as b(day, lo, hi)
join ${c.table} on ${c.time} >= b.lo and ${c.time} < b.hi and ${c.named}
group by b.day, platform`;
  return { text, values: p.values };
}

/**
 * Parameter profile per event x platform x version x key x JSON type: how many
 * events carry the key with that type, and for keys with few distinct values
 * the values with their counts. Keys listed in `untrackedKeys` ("event.key",
 * known to have many distinct values: amounts, session ids) are counted but
 * their values are not grouped, which would cost a hash entry per row. Rows
 * are grouped first by the raw platform value; the mapping then runs once per
 * group. Within the row limits: per event and platform the keys, per
 * platform the versions, with the most events (for versions: key
 * occurrences); each row carries how many its platform had.
 */
export function paramProfileQuery(mapping: WarehouseMapping, range: DayRange, events: string[], untrackedKeys: string[]): Query {
  const p = new Params();
  const parts = new ProfileParts(mapping, p);
  const limits = limitsOf(mapping);
  const text = `
with ${[parts.keyValuesCte(range, events, untrackedKeys), parts.rawGroupedCte(), parts.groupedCte(), parts.totalsCte(), parts.topsCte(), `profile as (\n${parts.profileRows()}\n)`, profileRanksCte(), seenCte('profile_ranked', ['key_rank', 'version_rank'])].join(',\n')}
select event, platform, version, key, json_type, events, distinct_values, min_number, max_number, fractional, top_values, param_keys, versions
from seen
where key_rank <= ${p.add(limits.param_keys)} and version_rank <= ${p.add(limits.versions)}`;
  return { text, values: p.values };
}

/** Ranks of each profile row's key among its event's keys, and of its version, on its platform: most events first, then byte order. */
function profileRanksCte(): string {
  return `profile_ranked as (
  select r.*,
         dense_rank() over (partition by event, platform order by key_total desc, key) as key_rank,
         dense_rank() over (partition by platform order by version_total desc, version) as version_rank
  from (
    select p.*, sum(events) over (partition by event, platform, key) as key_total, sum(events) over (partition by platform, version) as version_total
    from profile p
  ) r
)`;
}

/** A JSON number as a double; one too small to be anything but 0 reads as 0, as ClickHouse reads it (PostgreSQL's cast refuses it). */
function readNumber(value: string): string {
  return `case when abs((${value})::numeric) < ${DOUBLE_UNDERFLOW} then 0::float8 else (${value})::float8 end`;
}

/** The named CTEs of `paramProfileQuery`. */
class ProfileParts {
  readonly c: Columns;
  constructor(
    mapping: WarehouseMapping,
    readonly p: Params,
  ) {
    this.c = new Columns(mapping, p);
  }

  /** One row per key of each watched event's parameter object, with whether its values are grouped. */
  keyValuesCte(range: DayRange, events: string[], untrackedKeys: string[]): string {
    const { c, p } = this;
    const untracked = untrackedByEvent(untrackedKeys, events);
    const tracked = untracked.size
      ? `case ${[...untracked].map(([event, keys]) => `when r.event = ${p.add(event)}::text then kv.key <> all(${p.add(keys)}::text[])`).join(' ')} else true end`
      : 'true';
    return `kv as (
  select r.event, r.raw_platform, r.version, kv.key, jsonb_typeof(kv.value) as json_type,
         ${tracked} as tracked,
         kv.value
  from (
    select ${c.name} as event, ${c.col('platform')}::text as raw_platform, ${c.version} as version, ${c.props} as props
    from ${c.table}
    where ${c.time} >= ${p.add(range.lo)} and ${c.time} < ${p.add(range.hi)} and ${c.name} = any(${p.add(events)}::text[])
      and jsonb_typeof(${c.props}) = 'object'
  ) r
  cross join lateral (select ${cutText('j.key')} as key, j.value from jsonb_each(r.props) j) as kv
)`;
  }

  rawGroupedCte(): string {
    return `raw_grouped as (
  select event, raw_platform, version, key, json_type, tracked,
         case when tracked and json_type in ('string', 'number', 'boolean') then left(value #>> '{}', ${VALUE_MAX_LENGTH}) end as value,
         count(*) as n, min(number) as min_number, max(number) as max_number,
         count(*) filter (where number <> trunc(number)) as fractional
  from (select kv.*, case when json_type = 'number' then ${readNumber('value')} end as number from kv) k
  group by 1, 2, 3, 4, 5, 6, 7
)`;
  }

  groupedCte(): string {
    return `grouped as (
  select event, ${this.c.platformOf('raw_platform')} as platform, version, key, json_type, tracked, value,
         sum(n) as n, min(min_number) as min_number, max(max_number) as max_number, sum(fractional) as fractional
  from raw_grouped
  group by 1, 2, 3, 4, 5, 6, 7
)`;
  }

  totalsCte(): string {
    return `totals as (
  select event, platform, version, key, json_type, bool_and(tracked) as tracked, sum(n) as events, count(value) as distinct_values,
         min(min_number) as min_number, max(max_number) as max_number, sum(fractional) as fractional
  from grouped group by 1, 2, 3, 4, 5
)`;
  }

  topsCte(): string {
    return `tops as (
  select event, platform, version, key, json_type,
         jsonb_agg(jsonb_build_object('value', value, 'events', n) order by rank) as top_values
  from (
    select *, row_number() over (partition by event, platform, version, key, json_type order by n desc, value collate "C") as rank
    from grouped where value is not null
  ) r
  where rank <= ${TOP_VALUES}
  group by 1, 2, 3, 4, 5
)`;
  }

  profileRows(): string {
    return `select t.event, t.platform, t.version, t.key, t.json_type, t.events,
       case when t.tracked then t.distinct_values end as distinct_values,
       t.min_number, t.max_number, t.fractional,
       case when t.tracked and t.distinct_values <= ${LOW_CARDINALITY} then coalesce(tops.top_values, '[]'::jsonb) else '[]'::jsonb end as top_values
from totals t
left join tops using (event, platform, version, key, json_type)`;
  }
}
