/**
 * The ClickHouse dialect of the warehouse statements (the flow statements are
 * in flow.ts), with the meaning of the PostgreSQL dialect: exact distinct
 * people, byte order wherever order decides, the same day bounds. Read only.
 * Every statement reads one business day [lo, hi) through a range on the
 * time column, which the events table should have first in its ordering key.
 *
 * Parameters are parsed from the JSON text (a String column, or the JSON type
 * written out as text). Where JSON itself leaves room, the text decides: a
 * number is profiled by its JSON text as sent ("1e3" stays "1e3", where
 * PostgreSQL's jsonb writes "1000"), a key repeated in one object is profiled
 * at each occurrence (jsonb keeps the last), and the JSON type drops keys
 * whose value is null, so with it those never show up as 'null'.
 */
import { BAD_ROW_REASONS, LOW_CARDINALITY, TOP_VALUES, VALUE_MAX_LENGTH, dimensionAliases, limitsOf, untrackedByEvent } from '../mapping.js';
import type { DayRange } from '../engine.js';
import { Columns, cutText, type EventsTable } from './columns.js';
import { ChParams, type ChQuery } from './sql.js';

/**
 * Start and end of business day `day` in `timezone`, in milliseconds. Local
 * midnight that falls in a clock jump is the instant the jump ends, as in
 * PostgreSQL; a midnight that happens twice (clocks set back over it) is the
 * later one, as PostgreSQL picks the offset after the transition, where
 * ClickHouse's own conversion picks the earlier.
 */
export function dayBoundsQuery(day: string, timezone: string): ChQuery {
  const p = new ChParams();
  const tz = p.add(timezone, 'String');
  const midnight = (date: string) => `toDateTime64(${date}, 0, ${tz})`;
  // When the offset falls within three hours of the first reading, local midnight may come round again after the jump back.
  const later = (t: string) => `${t} + toIntervalSecond(timeZoneOffset(${t}) - timeZoneOffset(${t} + toIntervalHour(3)))`;
  const bound = (t: string) =>
    `toUnixTimestamp64Milli(toDateTime64(if(toHour(${later(t)}) = 0 and toMinute(${later(t)}) = 0 and toDate(${later(t)}) = toDate(${t}), ${later(t)}, ${t}), 3))`;
  const date = p.add(day, 'Date');
  return {
    text: `select ${bound('lo_local')} as lo, ${bound('hi_local')} as hi
from (select ${midnight(date)} as lo_local, ${midnight(`${date} + 1`)} as hi_local)`,
    params: p.values,
  };
}

/**
 * Events and distinct people per event x platform x version, plus per event x
 * platform (all versions) and per event x platform x dimension value, where a
 * person counts once per event under the lowest value of each dimension seen
 * that day (byte order). Two groupings of the day's rows, side by side: per
 * event x platform x version with exact distinct people (`uniqExact`), and
 * per event x platform x person carrying the person's lowest dimension
 * values, from which the all-versions and per-value rows are summed.
 *
 * Within the row limits (mapping.ts, ROW_LIMITS), per platform: the event
 * names (those in `keep` first), versions and values of each dimension with
 * the most events; each row carries how many distinct ones its platform had.
 */
export function eventCountsQuery(table: EventsTable, range: DayRange, keep: string[] = []): ChQuery {
  const p = new ChParams();
  const c = new Columns(table, p);
  const dims = dimensionAliases(table.mapping);
  const inDay = `${c.inRange(p.instant(range.lo), p.instant(range.hi))} and ${c.named}`;
  // (version, dimension, value) of every row a person's events feed besides their version's: all versions, then each dimension.
  const cells = [`('*', '', '')`, ...dims.map((d) => `('*', ${p.add(d.name, 'String')}, ${d.alias})`)];
  const text = `
with per_person as (
  select ${c.name} as event, ${c.platform} as platform, ${c.person} as person, count() as person_events${dims.map((d) => `, min(${c.dimension(d.name)}) as ${d.alias}`).join('')}
  from ${c.table}
  where ${inDay}
  group by event, platform, person
)
select ${c.name} as event, ${c.platform} as platform, ${c.version} as version, '' as dimension, '' as value, count() as events, uniqExact(${c.person}) as people
from ${c.table}
where ${inDay}
group by event, platform, version
union all
select event, platform, cell.1 as version, cell.2 as dimension, cell.3 as value, sum(person_events) as events, count(person) as people
from per_person
array join [${cells.join(', ')}] as cell
group by event, platform, version, dimension, value`;
  const limits = limitsOf(table.mapping);
  const kept = p.add(keep, 'Array(String)');
  // Distinct values are counted before the limits apply, so the filter stands outside the counting.
  const limitedText = `
select event, platform, version, dimension, value, events, people, event_names, versions, dimension_values
from (
  select *,
         max(event_rank) over (partition by platform) as event_names, max(version_rank) over (partition by platform) as versions,
         max(value_rank) over (partition by platform) as dimension_values
  from (
  select *,
         dense_rank() over (partition by platform order by has(${kept}, event) desc, event_total desc, event) as event_rank,
         if(version != '*' and dimension = '', dense_rank() over (partition by platform, version != '*' and dimension = '' order by version_total desc, version), NULL) as version_rank,
         if(dimension != '', dense_rank() over (partition by platform, dimension order by value_total desc, value), NULL) as value_rank
  from (
    select *,
           sumIf(events, version = '*' and dimension = '') over (partition by platform, event) as event_total,
           sumIf(events, version != '*' and dimension = '') over (partition by platform, version) as version_total,
           sum(events) over (partition by platform, dimension, value) as value_total
    from (${text}
    )
  )
  )
)
where (event_rank <= ${p.add(limits.event_names, 'UInt64')} or has(${kept}, event))
  and coalesce(version_rank, 1) <= ${p.add(limits.versions, 'UInt64')} and coalesce(value_rank, 1) <= ${p.add(limits.dimension_values, 'UInt64')}`;
  return { text: limitedText, params: p.values };
}

/**
 * Events per platform and local hour of the day (elapsed hours since local
 * midnight, so 23 or 25 of them on DST days), and the newest event in
 * milliseconds: the freshness status; with the day's bad rows per reason
 * (BAD_ROW_REASONS), each row under its first reason. Set-aside rows are not
 * events. Grouped by the raw platform value first; the mapping runs once per group.
 */
export function hourCountsQuery(table: EventsTable, range: DayRange, events: string[]): ChQuery {
  const p = new ChParams();
  const c = new Columns(table, p);
  const used = `coalesce(reason, '') != 'no_event_name'`;
  const text = `
select ${c.platformOf('raw_platform')} as platform, hour, sum(events) as events, if(max(newest) = 0, NULL, intDiv(max(newest), 1000)) as newest_at${BAD_ROW_REASONS.map((r) => `, sum(${r}) as ${r}`).join('')}
from (
  select raw_platform, hour, countIf(${used}) as events, maxIf(at, ${used}) as newest${BAD_ROW_REASONS.map((r) => `, countIf(reason = '${r}') as ${r}`).join('')}
  from (
    select ${c.rawPlatform} as raw_platform, intDiv(${c.micros} - ${p.micros(range.lo)}, 3600000000) as hour, ${c.micros} as at,
           ${c.badRowReason(`has(${p.add(events, 'Array(String)')}, ${c.role('name')})`)} as reason
    from ${c.table}
    where ${c.inRange(p.instant(range.lo), p.instant(range.hi))}
  )
  group by raw_platform, hour
)
group by platform, hour`;
  return { text, params: p.values };
}

/** Event counts per platform for a list of past days, to spot late rows that restate them. */
export function probeCountsQuery(table: EventsTable, days: Array<{ day: string } & DayRange>): ChQuery {
  const p = new ChParams();
  const c = new Columns(table, p);
  const first = days.reduce((a, b) => (a.lo < b.lo ? a : b)).lo;
  const last = days.reduce((a, b) => (a.hi > b.hi ? a : b)).hi;
  const los = p.add(days.map((d) => d.lo.getTime() * 1000), 'Array(Int64)');
  const his = p.add(days.map((d) => d.hi.getTime() * 1000), 'Array(Int64)');
  const text = `
select ${p.add(days.map((d) => d.day), 'Array(String)')}[day_index] as day, platform, count() as events
from (
  select arrayFirstIndex((lo, hi) -> ${c.micros} >= lo and ${c.micros} < hi, ${los}, ${his}) as day_index, ${c.platform} as platform
  from ${c.table}
  where ${c.inRange(p.instant(first), p.instant(last))} and ${c.named}
)
where day_index > 0
group by day, platform`;
  return { text, params: p.values };
}

/** The JSON type of a raw JSON value as PostgreSQL's jsonb_typeof names it. */
function jsonTypeOf(raw: string): string {
  const t = `JSONType(${raw})`;
  return `multiIf(${t} = 'String', 'string', ${t} in ('Int64', 'UInt64', 'Double'), 'number', ${t} = 'Bool', 'boolean', ${t} = 'Null', 'null', ${t} = 'Array', 'array', 'object')`;
}

/**
 * Parameter profile per event x platform x version x key x JSON type: events
 * carrying the key with that type, smallest and largest number, numbers with
 * a fraction, and for keys with few distinct values the top values (most
 * events first, then byte order). Keys in `untrackedKeys` ("event.key") are
 * counted without grouping their values. Within the row limits: per event
 * and platform the keys, per platform the versions, with the most events
 * (for versions: key occurrences); each row carries how many its platform had.
 */
export function paramProfileQuery(table: EventsTable, range: DayRange, events: string[], untrackedKeys: string[]): ChQuery {
  const p = new ChParams();
  const c = new Columns(table, p);
  const untracked = [...untrackedByEvent(untrackedKeys, events)];
  const tracked = untracked.length
    ? `multiIf(${untracked.map(([event, keys]) => `event = ${p.add(event, 'String')}, not has(${p.add(keys, 'Array(String)')}, key)`).join(', ')}, true)`
    : 'true';
  const text = `
with kv as (
  select event, raw_platform, version, pair.1 as key, pair.2 as raw, ${jsonTypeOf('raw')} as json_type, ${tracked} as tracked
  from (
    select ${c.name} as event, ${c.rawPlatform} as raw_platform, ${c.version} as version, ${c.props} as props
    from ${c.table}
    where ${c.inRange(p.instant(range.lo), p.instant(range.hi))} and has(${p.add(events, 'Array(String)')}, event)
  )
  array join arrayMap(kv -> (${cutText('kv.1')}, kv.2), JSONExtractKeysAndValuesRaw(assumeNotNull(props))) as pair
),
${rawGroupedCte()},
${groupedCte(c)}
${profileRows()}`;
  const limits = limitsOf(table.mapping);
  const limitedText = `
select event, platform, version, key, json_type, events, distinct_values, min_number, max_number, fractional, top_values, param_keys, versions
from (
  select *, max(key_rank) over (partition by platform) as param_keys, max(version_rank) over (partition by platform) as versions
  from (
  select *,
         dense_rank() over (partition by event, platform order by key_total desc, key) as key_rank,
         dense_rank() over (partition by platform order by version_total desc, version) as version_rank
  from (
    select *, sum(events) over (partition by event, platform, key) as key_total, sum(events) over (partition by platform, version) as version_total
    from (${text}
    )
  )
  )
)
where key_rank <= ${p.add(limits.param_keys, 'UInt64')} and version_rank <= ${p.add(limits.versions, 'UInt64')}`;
  return { text: limitedText, params: p.values };
}

function rawGroupedCte(): string {
  return `raw_grouped as (
  select event, raw_platform, version, key, json_type, tracked,
         if(tracked and json_type in ('string', 'number', 'boolean'), leftUTF8(if(json_type = 'string', JSONExtractString(raw), raw), ${VALUE_MAX_LENGTH}), null) as value,
         count() as raw_events, min(number) as raw_lowest, max(number) as raw_highest, countIf(number != trunc(number)) as raw_with_fraction
  from (select *, if(json_type = 'number', toFloat64(raw), null) as number from kv)
  group by event, raw_platform, version, key, json_type, tracked, value
)`;
}

function groupedCte(c: Columns): string {
  return `grouped as (
  select event, ${c.platformOf('raw_platform')} as platform, version, key, json_type, tracked, value,
         sum(raw_events) as value_events, min(raw_lowest) as lowest, max(raw_highest) as highest, sum(raw_with_fraction) as with_fraction
  from raw_grouped
  group by event, platform, version, key, json_type, tracked, value
)`;
}

function profileRows(): string {
  const values = `groupArrayIf(CAST((assumeNotNull(value), value_events), 'Tuple(value String, events UInt64)'), value is not null)`;
  return `select event, platform, version, key, json_type, sum(value_events) as events,
       if(min(tracked), count(value), null) as distinct_values,
       min(lowest) as min_number, max(highest) as max_number, sum(with_fraction) as fractional,
       if(min(tracked) and count(value) <= ${LOW_CARDINALITY}, arraySlice(arraySort(v -> (-v.events, v.value), ${values}), 1, ${TOP_VALUES}), []) as top_values
from grouped
group by event, platform, version, key, json_type`;
}
