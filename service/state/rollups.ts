/**
 * Reads and writes of the rollup tables in plumbline's state schema. Writes
 * replace a whole day (delete then insert, in the caller's transaction), so a
 * rerun of a day leaves exactly what a first run would.
 */
import type { DayStatusRow, EventDayRow, FunnelDayRow, ParamDayRow, StepDayRow } from '../../checks/types.js';
import { quoteIdent, type Query } from '../db/sql.js';

export function deleteDay(schema: string, table: 'event_days' | 'param_days' | 'day_status', day: string): Query {
  return { text: `delete from ${quoteIdent(schema)}.${quoteIdent(table)} where day = $1`, values: [day] };
}

export function deleteFlowDay(schema: string, table: 'funnel_days' | 'step_days', day: string, flow: string): Query {
  return { text: `delete from ${quoteIdent(schema)}.${quoteIdent(table)} where day = $1 and flow = $2`, values: [day, flow] };
}

export function insertStepDays(schema: string, day: string, rows: Omit<StepDayRow, 'day'>[]): Query {
  return {
    text: `insert into ${quoteIdent(schema)}.step_days (day, flow, step, platform, version, events, people)
      select $1::date, * from unnest($2::text[], $3::smallint[], $4::text[], $5::text[], $6::bigint[], $7::bigint[])`,
    values: [
      day,
      rows.map((r) => r.flow),
      rows.map((r) => r.step),
      rows.map((r) => r.platform),
      rows.map((r) => r.version),
      rows.map((r) => r.events),
      rows.map((r) => r.people),
    ],
  };
}

export function selectStepDays(schema: string, from: string, to: string, flow: string): Query {
  return {
    text: `select ${isoDay('day')} as day, flow, step, platform, version, events::float8 as events, people::float8 as people
      from ${quoteIdent(schema)}.step_days where day between $1 and $2 and flow = $3 order by day, step`,
    values: [from, to, flow],
  };
}

export function insertEventDays(schema: string, day: string, rows: Omit<EventDayRow, 'day'>[]): Query {
  return {
    text: `insert into ${quoteIdent(schema)}.event_days (day, event, platform, version, dimension, value, events, people)
      select $1::date, * from unnest($2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::bigint[], $8::bigint[])`,
    values: [
      day,
      rows.map((r) => r.event),
      rows.map((r) => r.platform),
      rows.map((r) => r.version),
      rows.map((r) => r.dimension),
      rows.map((r) => r.value),
      rows.map((r) => r.events),
      rows.map((r) => r.people),
    ],
  };
}

export type ParamRowToWrite = Omit<ParamDayRow, 'day' | 'eventTotal'>;

export function insertParamDays(schema: string, day: string, rows: ParamRowToWrite[]): Query {
  return {
    text: `insert into ${quoteIdent(schema)}.param_days
        (day, event, platform, version, key, json_type, events, distinct_values, top_values, min_number, max_number, fractional)
      select $1::date, event, platform, version, key, json_type, events, distinct_values, top_values::jsonb, min_number, max_number, fractional
      from unnest($2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::bigint[], $8::integer[], $9::text[],
        $10::double precision[], $11::double precision[], $12::bigint[])
        as t(event, platform, version, key, json_type, events, distinct_values, top_values, min_number, max_number, fractional)`,
    values: [
      day,
      rows.map((r) => r.event),
      rows.map((r) => r.platform),
      rows.map((r) => r.version),
      rows.map((r) => r.key),
      rows.map((r) => r.jsonType),
      rows.map((r) => r.events),
      rows.map((r) => r.distinctValues),
      rows.map((r) => JSON.stringify(r.topValues)),
      rows.map((r) => r.minNumber),
      rows.map((r) => r.maxNumber),
      rows.map((r) => r.fractional),
    ],
  };
}

export function insertFunnelDays(schema: string, day: string, rows: Omit<FunnelDayRow, 'day'>[]): Query {
  return {
    text: `insert into ${quoteIdent(schema)}.funnel_days
        (day, flow, platform, version, dimension, value, step, entered, reached, seconds_median, seconds_p90, timed)
      select $1::date, * from unnest($2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::smallint[], $8::bigint[],
        $9::bigint[], $10::double precision[], $11::double precision[], $12::bigint[])`,
    values: [
      day,
      rows.map((r) => r.flow),
      rows.map((r) => r.platform),
      rows.map((r) => r.version),
      rows.map((r) => r.dimension),
      rows.map((r) => r.value),
      rows.map((r) => r.step),
      rows.map((r) => r.entered),
      rows.map((r) => r.reached),
      rows.map((r) => r.secondsMedian),
      rows.map((r) => r.secondsP90),
      rows.map((r) => r.timed),
    ],
  };
}

/** Upserts the day's status, keeping the event count of the previous rollup to expose restatements. */
export function upsertDayStatus(schema: string, day: string, rows: Omit<DayStatusRow, 'day' | 'previousEvents' | 'rolledUpAt'>[]): Query {
  const s = quoteIdent(schema);
  return {
    text: `insert into ${s}.day_status as d (day, platform, events, newest_at, hourly, previous_events, rolled_up_at, bad_rows, over_limits)
      select $1::date, t.platform, t.events, t.newest_at, array(select jsonb_array_elements_text(t.hourly::jsonb)::int), null, now(), t.bad_rows::jsonb, t.over_limits::jsonb
      from unnest($2::text[], $3::bigint[], $4::timestamptz[], $5::text[], $6::text[], $7::text[]) as t(platform, events, newest_at, hourly, bad_rows, over_limits)
      on conflict (day, platform) do update set
        previous_events = case when d.events <> excluded.events then d.events else d.previous_events end,
        events = excluded.events, newest_at = excluded.newest_at, hourly = excluded.hourly, rolled_up_at = excluded.rolled_up_at,
        bad_rows = excluded.bad_rows, over_limits = excluded.over_limits`,
    values: [
      day,
      rows.map((r) => r.platform),
      rows.map((r) => r.events),
      rows.map((r) => r.newestAt),
      rows.map((r) => JSON.stringify(r.hourly)),
      rows.map((r) => JSON.stringify(r.badRows)),
      rows.map((r) => JSON.stringify(r.overLimits ?? {})),
    ],
  };
}

/** Platforms that had a status row for the day but none now (all their events vanished). */
export function deleteStatusExcept(schema: string, day: string, platforms: string[]): Query {
  return {
    text: `delete from ${quoteIdent(schema)}.day_status where day = $1 and platform <> all($2::text[])`,
    values: [day, platforms],
  };
}

/** Keys whose values were too many to profile recently: their values are not grouped again. */
export function untrackedKeysQuery(schema: string, day: string, lookbackDays: number, threshold: number): Query {
  return {
    text: `select distinct event || '.' || key as key from ${quoteIdent(schema)}.param_days
      where day >= $1::date - $2::int and day < $1::date and (distinct_values is null or distinct_values > $3)`,
    values: [day, lookbackDays, threshold],
  };
}

const isoDay = (column: string) => `to_char(${column}, 'YYYY-MM-DD')`;

export function selectEventDays(schema: string, from: string, to: string, events: string[]): Query {
  return {
    text: `select ${isoDay('day')} as day, event, platform, version, dimension, value, events::float8 as events, people::float8 as people
      from ${quoteIdent(schema)}.event_days where day between $1 and $2 and event = any($3::text[]) order by day`,
    values: [from, to, events],
  };
}

export function selectParamDays(schema: string, from: string, to: string, events: string[]): Query {
  const s = quoteIdent(schema);
  return {
    text: `select ${isoDay('p.day')} as day, p.event, p.platform, p.version, p.key, p.json_type as "jsonType", p.events::float8 as events,
        p.distinct_values as "distinctValues", p.top_values as "topValues", p.min_number as "minNumber", p.max_number as "maxNumber",
        p.fractional::float8 as fractional, coalesce(e.events, 0)::float8 as "eventTotal"
      from ${s}.param_days p
      left join ${s}.event_days e on e.day = p.day and e.event = p.event and e.platform = p.platform and e.version = p.version
        and e.dimension = '' and e.value = ''
      where p.day between $1 and $2 and p.event = any($3::text[]) order by p.day`,
    values: [from, to, events],
  };
}

export function selectFunnelDays(schema: string, from: string, to: string, flow: string): Query {
  return {
    text: `select ${isoDay('day')} as day, flow, platform, version, dimension, value, step, entered::float8 as entered, reached::float8 as reached,
        seconds_median as "secondsMedian", seconds_p90 as "secondsP90", timed::float8 as timed
      from ${quoteIdent(schema)}.funnel_days where day between $1 and $2 and flow = $3 order by day, step`,
    values: [from, to, flow],
  };
}

export function selectDayStatus(schema: string, from: string, to: string): Query {
  return {
    text: `select ${isoDay('day')} as day, platform, events::float8 as events, newest_at as "newestAt", hourly,
        rolled_up_at as "rolledUpAt", previous_events::float8 as "previousEvents", bad_rows as "badRows", over_limits as "overLimits"
      from ${quoteIdent(schema)}.day_status where day between $1 and $2 order by day`,
    values: [from, to],
  };
}

/**
 * The earliest of the latest `count` days before `before` on which any of
 * `platforms` sent an event (null without one): where a history must start to
 * hold `count` days with data, however long the silences between them.
 */
export function selectDataDaysStart(schema: string, platforms: readonly string[], before: string, count: number): Query {
  return {
    text: `select ${isoDay('min(day)')} as day from (
        select day from ${quoteIdent(schema)}.day_status where day < $1 and platform = any($2) and events > 0
        group by day order by day desc limit $3) as latest`,
    values: [before, platforms, count],
  };
}
