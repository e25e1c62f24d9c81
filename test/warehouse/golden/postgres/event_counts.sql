with per_person as (
  select event, platform, person, count(*)::int as n, min(version) as version_lo, max(version) as version_hi, min(d0) as d0, min(d1) as d1
  from (
    select (case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C") as event, (case when e."platform"::text = any($3::text[]) then $4::text when e."platform"::text = any($5::text[]) then $6::text when e."platform"::text = any($7::text[]) then $8::text else $9::text end collate "C") as platform, (case when coalesce(e."app_version"::text, '') = '*' then '' else case when length(coalesce(e."app_version"::text, '')) > 128 then left(coalesce(e."app_version"::text, ''), 127) || '…' else coalesce(e."app_version"::text, '') end end collate "C") as version, (coalesce(case when btrim(e."user_id"::text, E' \t\r\n') <> '' then 'u:' || e."user_id"::text end, case when btrim(e."device_id"::text, E' \t\r\n') <> '' then 'd:' || e."device_id"::text end) collate "C") as person, (case when length(coalesce(e."country"::text, '')) > 128 then left(coalesce(e."country"::text, ''), 127) || '…' else coalesce(e."country"::text, '') end collate "C") as d0, (case when length(coalesce(e."channel"::text, '')) > 128 then left(coalesce(e."channel"::text, ''), 127) || '…' else coalesce(e."channel"::text, '') end collate "C") as d1
    from "analytics"."events" e
    where e."occurred_at" >= $1 and e."occurred_at" < $2 and coalesce(btrim(e."event_name"::text, E' \t\r\n') <> '', false)
  ) r
  group by event, platform, person
),
-- One cell per event, platform, version and dimension values; people with several versions get a cell each.
cells as (
  select event, platform, version, several, d0, d1, sum(n) as n, count(person) as people
  from (
    select per_person.*,
           case when version_lo = version_hi then version_lo end as version,
           case when version_lo <> version_hi then coalesce(person, '') end as several
    from per_person
  ) s
  group by event, platform, version, several, d0, d1
),
several_versions as (
  select event, platform, version, count(*) as n, count(distinct person) as people
  from (
    select (case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C") as event, (case when e."platform"::text = any($10::text[]) then $11::text when e."platform"::text = any($12::text[]) then $13::text when e."platform"::text = any($14::text[]) then $15::text else $16::text end collate "C") as platform, (case when coalesce(e."app_version"::text, '') = '*' then '' else case when length(coalesce(e."app_version"::text, '')) > 128 then left(coalesce(e."app_version"::text, ''), 127) || '…' else coalesce(e."app_version"::text, '') end end collate "C") as version, (coalesce(case when btrim(e."user_id"::text, E' \t\r\n') <> '' then 'u:' || e."user_id"::text end, case when btrim(e."device_id"::text, E' \t\r\n') <> '' then 'd:' || e."device_id"::text end) collate "C") as person
    from "analytics"."events" e
    where e."occurred_at" >= $1 and e."occurred_at" < $2 and coalesce(btrim(e."event_name"::text, E' \t\r\n') <> '', false)
  ) r
  where (event, platform, coalesce(person, '')) in (select event, platform, several from cells where several is not null)
  group by event, platform, version
),
counted as (
select event, platform, version, '' as dimension, '' as value, sum(n) as events, sum(people) as people
from (
  select event, platform, version, n, people from cells where version is not null
  union all select event, platform, version, n, people from several_versions
) v
group by event, platform, version
union all select event, platform, '*', '', '', sum(n), sum(people) from cells group by event, platform
union all select event, platform, '*', $17::text, d0, sum(n), sum(people) from cells group by event, platform, d0
union all select event, platform, '*', $18::text, d1, sum(n), sum(people) from cells group by event, platform, d1
),
count_totals as (
  select c.*,
         sum(events) filter (where version = '*' and dimension = '') over (partition by platform, event) as event_total,
         sum(events) filter (where version <> '*' and dimension = '') over (partition by platform, version) as version_total,
         sum(events) over (partition by platform, dimension, value) as value_total
  from counted c
),
ranked as (
  select t.*,
         dense_rank() over (partition by platform order by event = any($19::text[]) desc, event_total desc, event) as event_rank,
         case when version <> '*' and dimension = '' then dense_rank() over (partition by platform, version <> '*' and dimension = '' order by version_total desc, version) end as version_rank,
         case when dimension <> '' then dense_rank() over (partition by platform, dimension order by value_total desc, value) end as value_rank
  from count_totals t
),
seen as (
  select r.*, max(event_rank) over (partition by platform) as event_names, max(version_rank) over (partition by platform) as versions, max(value_rank) over (partition by platform) as dimension_values
  from ranked r
)
select event, platform, version, dimension, value, events, people, event_names, versions, dimension_values
from seen
where (event_rank <= $20 or event = any($21::text[]))
  and coalesce(version_rank, 1) <= $22 and coalesce(value_rank, 1) <= $23

-- values: ["2026-03-08T05:00:00.000Z","2026-03-09T04:00:00.000Z",["web","Web"],"web",["Android"],"android",["iOS"],"ios","other",["web","Web"],"web",["Android"],"android",["iOS"],"ios","other","country","channel",[],5000,[],500,1000]
