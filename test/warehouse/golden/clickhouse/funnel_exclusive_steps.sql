with step_events as (
  select person, platform, event_version, at, d0, d1, step
  from (
    select *, multiIf((event = {p2:String} and has({p3:Array(String)}, param_0)), 0, (event = {p4:String} and has({p5:Array(String)}, param_0)), 1, (event = {p6:String} and has({p7:Array(String)}, param_1) and has({p8:Array(String)}, param_2)), 2, -1) as step
    from (
      select coalesce(if(trimBoth(e."user_id", ' \t\r\n') != '', concat('u:', e."user_id"), NULL), if(trimBoth(toString(e."device_id"), ' \t\r\n') != '', concat('d:', toString(e."device_id")), NULL)) as person, transform(e."platform", {p9:Array(String)}, {p10:Array(String)}, {p11:String}) as platform, if(coalesce(e."app_version", '') = '*', '', if(lengthUTF8(coalesce(e."app_version", '')) > 128, concat(leftUTF8(coalesce(e."app_version", ''), 127), '…'), coalesce(e."app_version", ''))) as event_version, toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) as at, if(lengthUTF8(coalesce(e."country", '')) > 128, concat(leftUTF8(coalesce(e."country", ''), 127), '…'), coalesce(e."country", '')) as d0, if(lengthUTF8(coalesce(toString(e."channel"), '')) > 128, concat(leftUTF8(coalesce(toString(e."channel"), ''), 127), '…'), coalesce(toString(e."channel"), '')) as d1, if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, if(has({p12:Array(String)}, event), JSONExtract(e."props", {p13:String}, 'Nullable(String)'), null) as param_0, if(has({p14:Array(String)}, event), JSONExtract(e."props", {p15:String}, 'Nullable(String)'), null) as param_1, if(has({p16:Array(String)}, event), JSONExtract(e."props", {p17:String}, 'Nullable(String)'), null) as param_2
      from "analytics"."events" as e
      where e."occurred_at" >= {p18:DateTime64(6, 'UTC')} and e."occurred_at" < {p19:DateTime64(6, 'UTC')} and has({p20:Array(String)}, event)
    )
  )
  where step >= 0
),
journeys as (
  select platform,
         groupArrayIf(at, step = 0) as s0,
         groupArrayIf(at, step = 1) as s1,
         groupArrayIf(at, step = 2) as s2,
         minIf(at, step = 0 and at < {p1:Int64}) as t_entry, argMinIf(step, (at, step), step = 0 and at < {p1:Int64}) as entry_step,
         argMinIf(event_version, (at, step, event_version), step = 0 and at < {p1:Int64}) as entry_version,
         argMinIf(d0, (at, step, d0), step = 0 and at < {p1:Int64}) as entry_d0,
         argMinIf(d1, (at, step, d1), step = 0 and at < {p1:Int64}) as entry_d1
  from step_events
  where person is not null
  group by person, platform
  having countIf(step = 0 and at < {p1:Int64}) > 0
),
reach_0 as (select *, if(entry_step = 0, t_entry, null) as t0 from journeys),
reach_1 as (
  select *, multiIf(entry_step = 1, t_entry, entry_step > 1 or t0 is null or empty(s1), null,
                    length(s1) = 1, if(s1[1] >= t0 and s1[1] <= t_entry + {p21:Int64}, s1[1], null),
                    notEmpty(arrayFilter(x -> x >= assumeNotNull(t0) and x <= t_entry + {p21:Int64}, s1)), arrayMin(arrayFilter(x -> x >= assumeNotNull(t0) and x <= t_entry + {p21:Int64}, s1)), null) as t1
  from reach_0
),
reach_2 as (
  select *, multiIf(entry_step = 2, t_entry, entry_step > 2 or t1 is null or empty(s2), null,
                    length(s2) = 1, if(s2[1] >= t1 and s2[1] <= t_entry + {p21:Int64}, s2[1], null),
                    notEmpty(arrayFilter(x -> x >= assumeNotNull(t1) and x <= t_entry + {p21:Int64}, s2)), arrayMin(arrayFilter(x -> x >= assumeNotNull(t1) and x <= t_entry + {p21:Int64}, s2)), null) as t2
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
         groupArrayIf(g1, g1 <= {p22:Float64}) as kept1,
         groupArrayIf(g2, g2 <= {p22:Float64}) as kept2
  from paths
  group by platform, entry_version, entry_d0, entry_d1
),
funnel_cells as (
  select platform, cell.1 as version, cell.2 as dimension, cell.3 as value,
         sumForEach(entered) as entered_all, sumForEach(reached) as reached_all,
         arraySort(groupArrayArray(kept1)) as sorted1,
         arraySort(groupArrayArray(kept2)) as sorted2
  from path_groups
  array join [(entry_version, '', ''), ('*', '', ''), ('*', {p23:String}, entry_d0), ('*', {p24:String}, entry_d1)] as cell
  group by platform, version, dimension, value
)
select 'funnel' as kind, platform, version, dimension, value, entered_all as entered, reached_all as reached,
  [null, if(empty(sorted1), null, sorted1[toUInt64(floor(0.5 * (length(sorted1) - 1))) + 1] + (sorted1[toUInt64(ceil(0.5 * (length(sorted1) - 1))) + 1] - sorted1[toUInt64(floor(0.5 * (length(sorted1) - 1))) + 1]) * (0.5 * (length(sorted1) - 1) - floor(0.5 * (length(sorted1) - 1)))), if(empty(sorted2), null, sorted2[toUInt64(floor(0.5 * (length(sorted2) - 1))) + 1] + (sorted2[toUInt64(ceil(0.5 * (length(sorted2) - 1))) + 1] - sorted2[toUInt64(floor(0.5 * (length(sorted2) - 1))) + 1]) * (0.5 * (length(sorted2) - 1) - floor(0.5 * (length(sorted2) - 1))))] as seconds_median,
  [null, if(empty(sorted1), null, sorted1[toUInt64(floor(0.9 * (length(sorted1) - 1))) + 1] + (sorted1[toUInt64(ceil(0.9 * (length(sorted1) - 1))) + 1] - sorted1[toUInt64(floor(0.9 * (length(sorted1) - 1))) + 1]) * (0.9 * (length(sorted1) - 1) - floor(0.9 * (length(sorted1) - 1)))), if(empty(sorted2), null, sorted2[toUInt64(floor(0.9 * (length(sorted2) - 1))) + 1] + (sorted2[toUInt64(ceil(0.9 * (length(sorted2) - 1))) + 1] - sorted2[toUInt64(floor(0.9 * (length(sorted2) - 1))) + 1]) * (0.9 * (length(sorted2) - 1) - floor(0.9 * (length(sorted2) - 1))))] as seconds_p90,
  [0, length(sorted1), length(sorted2)] as timed
from funnel_cells

-- values: {"p1":1773028800000000,"p2":"screen_shown","p3":["pass_intro"],"p4":"screen_shown","p5":["zone_picker","zone_v2"],"p6":"pass_purchase_result","p7":["approved"],"p8":["false"],"p9":["web","Web","Android","iOS"],"p10":["web","web","android","ios"],"p11":"other","p12":["screen_shown"],"p13":"view","p14":["pass_purchase_result"],"p15":"outcome","p16":["pass_purchase_result"],"p17":"test","p18":"2026-03-08 05:00:00.000","p19":"2026-03-09 04:30:00.000","p20":["screen_shown","pass_purchase_result"],"p21":1800000000,"p22":300,"p23":"country","p24":"channel"}
