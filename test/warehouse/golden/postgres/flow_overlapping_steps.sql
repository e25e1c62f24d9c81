with step_events as materialized (
  select * from (
    select (coalesce(case when btrim(e."user_id"::text, E' \t\r\n') <> '' then 'u:' || e."user_id"::text end, case when btrim(e."device_id"::text, E' \t\r\n') <> '' then 'd:' || e."device_id"::text end) collate "C") as person, (case when e."platform"::text = any($9::text[]) then $10::text when e."platform"::text = any($11::text[]) then $12::text when e."platform"::text = any($13::text[]) then $14::text else $15::text end collate "C") as platform, (case when coalesce(e."app_version"::text, '') = '*' then '' else case when length(coalesce(e."app_version"::text, '')) > 128 then left(coalesce(e."app_version"::text, ''), 127) || '…' else coalesce(e."app_version"::text, '') end end collate "C") as version, e."occurred_at" as at, s.step as step, (case when length(coalesce(e."country"::text, '')) > 128 then left(coalesce(e."country"::text, ''), 127) || '…' else coalesce(e."country"::text, '') end collate "C") as d0, (case when length(coalesce(e."channel"::text, '')) > 128 then left(coalesce(e."channel"::text, ''), 127) || '…' else coalesce(e."channel"::text, '') end collate "C") as d1
    from "analytics"."events" e
    cross join lateral unnest(array[case when ((case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C")::text = $4::text) then 0 end, case when ((case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C")::text = $5::text and (case when coalesce(jsonb_path_exists(e."props", 'lax $.** ? (@.type() == "number" && (@ >= 1.7976931348623158079372897e308 || @ <= -1.7976931348623158079372897e308))'), false) then null else e."props" end) ->> $6::text = any($7::text[])) then 1 end, case when ((case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C")::text = $8::text) then 2 end]) as s(step)
    where e."occurred_at" >= $2 and e."occurred_at" < $3::timestamptz + $1::interval
      and (case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C")::text = any($16::text[])
    offset 0
  ) r
  where step is not null
),
journeys as (
  select person, platform,
         array_agg(at) filter (where step = 0) as s0,
         array_agg(at) filter (where step = 1) as s1,
         array_agg(at) filter (where step = 2) as s2,
         min(at) filter (where at < $3) as t_entry,
         array_agg(at) filter (where at < $3) as e_at,
         array_agg(step) filter (where at < $3) as e_step,
         array_agg(version) filter (where at < $3) as e_version,
         array_agg(d0) filter (where at < $3) as e_d0,
         array_agg(d1) filter (where at < $3) as e_d1,
         count(*) filter (where step = 0 and at < $3)::int as n0,
         count(*) filter (where step = 1 and at < $3)::int as n1,
         count(*) filter (where step = 2 and at < $3)::int as n2,
         min(version) filter (where at < $3) as day_version_lo,
         max(version) filter (where at < $3) as day_version_hi
  from step_events
  group by person, platform
),
paths as (
  select j.platform, a.entry_step, case when cardinality(j.e_at) = 1 then j.e_version[1]
          else (select min(u.version collate "C") from unnest(j.e_at, j.e_step, j.e_version, j.e_d0, j.e_d1) as u(at, step, version, d0, d1) where u.at = j.t_entry and u.step = a.entry_step) end as version,
         case when cardinality(j.e_at) = 1 then j.e_d0[1]
          else (select min(u.d0 collate "C") from unnest(j.e_at, j.e_step, j.e_version, j.e_d0, j.e_d1) as u(at, step, version, d0, d1) where u.at = j.t_entry and u.step = a.entry_step) end as d0,
         case when cardinality(j.e_at) = 1 then j.e_d1[1]
          else (select min(u.d1 collate "C") from unnest(j.e_at, j.e_step, j.e_version, j.e_d0, j.e_d1) as u(at, step, version, d0, d1) where u.at = j.t_entry and u.step = a.entry_step) end as d1,
         m0.t0, m1.t1, m2.t2, null::double precision as g0, extract(epoch from m1.t1 - m0.t0)::double precision as g1, extract(epoch from m2.t2 - m1.t1)::double precision as g2
  from journeys j
  cross join lateral (select case when j.t_entry = any(j.s0) then 0 when j.t_entry = any(j.s1) then 1 when j.t_entry = any(j.s2) then 2 end as entry_step offset 0) a
  cross join lateral (select case when a.entry_step = 0 then j.t_entry end as t0 offset 0) m0
  cross join lateral (select case when a.entry_step = 1 then j.t_entry
                  when a.entry_step < 1 and m0.t0 is not null and j.s1 is not null then
                    case when cardinality(j.s1) = 1
                         then case when j.s1[1] >= m0.t0 and j.s1[1] <= j.t_entry + $1::interval then j.s1[1] end
                         else (select min(x) from unnest(j.s1) x where x >= m0.t0 and x <= j.t_entry + $1::interval) end
             end as t1 offset 0) m1
  cross join lateral (select case when a.entry_step = 2 then j.t_entry
                  when a.entry_step < 2 and m1.t1 is not null and j.s2 is not null then
                    case when cardinality(j.s2) = 1
                         then case when j.s2[1] >= m1.t1 and j.s2[1] <= j.t_entry + $1::interval then j.s2[1] end
                         else (select min(x) from unnest(j.s2) x where x >= m1.t1 and x <= j.t_entry + $1::interval) end
             end as t2 offset 0) m2
  where j.t_entry is not null and j.person is not null
),
-- Step counts per platform, and per version for people who used one version that day (version null otherwise).
step_cells as (
  select platform, case when grouping(version) = 0 then version else '*' end as version,
         array[sum(n0), sum(n1), sum(n2)] as events,
         array[count(person) filter (where n0 > 0), count(person) filter (where n1 > 0), count(person) filter (where n2 > 0)] as people
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
  where at < $3
    and (coalesce(person, ''), platform) in (select coalesce(person, ''), platform from journeys where day_version_lo <> day_version_hi)
  group by platform, version, step
)
select 'funnel'::text as kind, platform,
  case when grouping(version) = 0 then version else '*' end as version,
  case when grouping(d0) = 0 then $17::text when grouping(d1) = 0 then $18::text else '' end as dimension,
  coalesce(case when grouping(d0) = 0 then d0 end, case when grouping(d1) = 0 then d1 end, '') as value,
  array[count(*) filter (where entry_step = 0), count(*) filter (where entry_step = 1), count(*) filter (where entry_step = 2)] as entered,
  array[count(t0), count(t1), count(t2)] as reached,
  array[null::double precision, percentile_cont(0.5) within group (order by g1) filter (where g1 <= $19), percentile_cont(0.5) within group (order by g2) filter (where g2 <= $19)] as seconds_median,
  array[null::double precision, percentile_cont(0.9) within group (order by g1) filter (where g1 <= $19), percentile_cont(0.9) within group (order by g2) filter (where g2 <= $19)] as seconds_p90,
  array[0::bigint, count(g1) filter (where g1 <= $19), count(g2) filter (where g2 <= $19)] as timed,
  null::int as step, null::numeric as events, null::numeric as people
from paths
group by grouping sets ((platform, version), (platform), (platform, d0), (platform, d1))
union all
select 'step'::text as kind, platform, version, '' as dimension, '' as value,
  null::bigint[] as entered, null::bigint[] as reached, null::float8[] as seconds_median, null::float8[] as seconds_p90, null::bigint[] as timed,
  step, sum(events) as events, sum(people) as people
from step_rows group by platform, version, step

-- values: ["1800 seconds","2026-03-08T05:00:00.000Z","2026-03-09T04:00:00.000Z","screen_shown","screen_shown","view",["zone_picker"],"tap_pay",["web","Web"],"web",["Android"],"android",["iOS"],"ios","other",["screen_shown","tap_pay"],"country","channel",300]
