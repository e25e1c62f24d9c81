with step_events as (
  select person, platform, event_version, at, d0, d1, step
  from (
    select *, arrayFilter(s -> s >= 0, [if((event = {p2:String}), 0, -1), if((event = {p3:String} and has({p4:Array(String)}, param_0)), 1, -1), if((event = {p5:String}), 2, -1)]) as matched
    from (
      select coalesce(if(trimBoth(e."user_id", ' \t\r\n') != '', concat('u:', e."user_id"), NULL), if(trimBoth(toString(e."device_id"), ' \t\r\n') != '', concat('d:', toString(e."device_id")), NULL)) as person, transform(e."platform", {p6:Array(String)}, {p7:Array(String)}, {p8:String}) as platform, if(coalesce(e."app_version", '') = '*', '', if(lengthUTF8(coalesce(e."app_version", '')) > 128, concat(leftUTF8(coalesce(e."app_version", ''), 127), '…'), coalesce(e."app_version", ''))) as event_version, toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) as at, if(lengthUTF8(coalesce(e."country", '')) > 128, concat(leftUTF8(coalesce(e."country", ''), 127), '…'), coalesce(e."country", '')) as d0, if(lengthUTF8(coalesce(toString(e."channel"), '')) > 128, concat(leftUTF8(coalesce(toString(e."channel"), ''), 127), '…'), coalesce(toString(e."channel"), '')) as d1, if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, if(has({p9:Array(String)}, event), JSONExtract(e."props", {p10:String}, 'Nullable(String)'), null) as param_0
      from "analytics"."events" as e
      where e."occurred_at" >= {p11:DateTime64(6, 'UTC')} and e."occurred_at" < {p12:DateTime64(6, 'UTC')} and has({p13:Array(String)}, event)
    )
  )
  array join matched as step
),
journeys as (
  select platform,
         groupArrayIf(at, step = 0) as s0,
         groupArrayIf(at, step = 1) as s1,
         groupArrayIf(at, step = 2) as s2,
         minIf(at, at < {p1:Int64}) as t_entry, argMinIf(step, (at, step), at < {p1:Int64}) as entry_step,
         argMinIf(event_version, (at, step, event_version), at < {p1:Int64}) as entry_version,
         argMinIf(d0, (at, step, d0), at < {p1:Int64}) as entry_d0,
         argMinIf(d1, (at, step, d1), at < {p1:Int64}) as entry_d1
  from step_events
  where person is not null
  group by person, platform
  having countIf(at < {p1:Int64}) > 0
),
reach_0 as (select *, if(entry_step = 0, t_entry, null) as t0 from journeys),
reach_1 as (
  select *, multiIf(entry_step = 1, t_entry, entry_step > 1 or t0 is null or empty(s1), null,
                    length(s1) = 1, if(s1[1] >= t0 and s1[1] <= t_entry + {p14:Int64}, s1[1], null),
                    notEmpty(arrayFilter(x -> x >= assumeNotNull(t0) and x <= t_entry + {p14:Int64}, s1)), arrayMin(arrayFilter(x -> x >= assumeNotNull(t0) and x <= t_entry + {p14:Int64}, s1)), null) as t1
  from reach_0
),
reach_2 as (
  select *, multiIf(entry_step = 2, t_entry, entry_step > 2 or t1 is null or empty(s2), null,
                    length(s2) = 1, if(s2[1] >= t1 and s2[1] <= t_entry + {p14:Int64}, s2[1], null),
                    notEmpty(arrayFilter(x -> x >= assumeNotNull(t1) and x <= t_entry + {p14:Int64}, s2)), arrayMin(arrayFilter(x -> x >= assumeNotNull(t1) and x <= t_entry + {p14:Int64}, s2)), null) as t2
  from reach_1
),
paths as (
  select platform, entry_step, entry_version, entry_d0, entry_d1,
         t0, t1, t2, (t1 - t0) / 1e6 as g1, (t2 - t1) / 1e6 as g2
  from reach_2
),
path_groups as (
  select platform, entry_version, entry_d0, entry_d1,
         [countIf(entry_step = 0), countIf(entry_step = 1), countIf(entry_step = 2)] as entered,
         [count(t0), count(t1), count(t2)] as reached,
         groupArrayIf(g1, g1 <= {p15:Float64}) as kept1,
         groupArrayIf(g2, g2 <= {p15:Float64}) as kept2
  from paths
  group by platform, entry_version, entry_d0, entry_d1
),
funnel_cells as (
  select platform, cell.1 as version, cell.2 as dimension, cell.3 as value,
         sumForEach(entered) as entered_all, sumForEach(reached) as reached_all,
         arraySort(groupArrayArray(kept1)) as sorted1,
         arraySort(groupArrayArray(kept2)) as sorted2
  from path_groups
  array join [(entry_version, '', ''), ('*', '', ''), ('*', {p16:String}, entry_d0), ('*', {p17:String}, entry_d1)] as cell
  group by platform, version, dimension, value
)
select 'funnel' as kind, platform, version, dimension, value, entered_all as entered, reached_all as reached,
  [null, if(empty(sorted1), null, sorted1[toUInt64(floor(0.5 * (length(sorted1) - 1))) + 1] + (sorted1[toUInt64(ceil(0.5 * (length(sorted1) - 1))) + 1] - sorted1[toUInt64(floor(0.5 * (length(sorted1) - 1))) + 1]) * (0.5 * (length(sorted1) - 1) - floor(0.5 * (length(sorted1) - 1)))), if(empty(sorted2), null, sorted2[toUInt64(floor(0.5 * (length(sorted2) - 1))) + 1] + (sorted2[toUInt64(ceil(0.5 * (length(sorted2) - 1))) + 1] - sorted2[toUInt64(floor(0.5 * (length(sorted2) - 1))) + 1]) * (0.5 * (length(sorted2) - 1) - floor(0.5 * (length(sorted2) - 1))))] as seconds_median,
  [null, if(empty(sorted1), null, sorted1[toUInt64(floor(0.9 * (length(sorted1) - 1))) + 1] + (sorted1[toUInt64(ceil(0.9 * (length(sorted1) - 1))) + 1] - sorted1[toUInt64(floor(0.9 * (length(sorted1) - 1))) + 1]) * (0.9 * (length(sorted1) - 1) - floor(0.9 * (length(sorted1) - 1)))), if(empty(sorted2), null, sorted2[toUInt64(floor(0.9 * (length(sorted2) - 1))) + 1] + (sorted2[toUInt64(ceil(0.9 * (length(sorted2) - 1))) + 1] - sorted2[toUInt64(floor(0.9 * (length(sorted2) - 1))) + 1]) * (0.9 * (length(sorted2) - 1) - floor(0.9 * (length(sorted2) - 1))))] as seconds_p90,
  [0, length(sorted1), length(sorted2)] as timed
from funnel_cells

-- values: {"p1":1773028800000000,"p2":"screen_shown","p3":"screen_shown","p4":["zone_picker"],"p5":"tap_pay","p6":["web","Web","Android","iOS"],"p7":["web","web","android","ios"],"p8":"other","p9":["screen_shown"],"p10":"view","p11":"2026-03-08 05:00:00.000","p12":"2026-03-09 04:30:00.000","p13":["screen_shown","tap_pay"],"p14":1800000000,"p15":300,"p16":"country","p17":"channel"}
