with kv as (
  select r.event, r.raw_platform, r.version, kv.key, jsonb_typeof(kv.value) as json_type,
         case when r.event = $1::text then kv.key <> all($2::text[]) else true end as tracked,
         kv.value
  from (
    select (case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C") as event, e."platform"::text as raw_platform, (case when coalesce(e."app_version"::text, '') = '*' then '' else case when length(coalesce(e."app_version"::text, '')) > 128 then left(coalesce(e."app_version"::text, ''), 127) || '…' else coalesce(e."app_version"::text, '') end end collate "C") as version, (case when coalesce(jsonb_path_exists(e."props", 'lax $.** ? (@.type() == "number" && (@ >= 1.7976931348623158079372897e308 || @ <= -1.7976931348623158079372897e308))'), false) then null else e."props" end) as props
    from "analytics"."events" e
    where e."occurred_at" >= $3 and e."occurred_at" < $4 and (case when length(e."event_name"::text) > 128 then left(e."event_name"::text, 127) || '…' else e."event_name"::text end collate "C") = any($5::text[])
      and jsonb_typeof((case when coalesce(jsonb_path_exists(e."props", 'lax $.** ? (@.type() == "number" && (@ >= 1.7976931348623158079372897e308 || @ <= -1.7976931348623158079372897e308))'), false) then null else e."props" end)) = 'object'
  ) r
  cross join lateral (select case when length(j.key) > 128 then left(j.key, 127) || '…' else j.key end as key, j.value from jsonb_each(r.props) j) as kv
),
raw_grouped as (
  select event, raw_platform, version, key, json_type, tracked,
         case when tracked and json_type in ('string', 'number', 'boolean') then left(value #>> '{}', 64) end as value,
         count(*) as n, min(number) as min_number, max(number) as max_number,
         count(*) filter (where number <> trunc(number)) as fractional
  from (select kv.*, case when json_type = 'number' then case when abs((value)::numeric) < 2.4703282292062327208828e-324 then 0::float8 else (value)::float8 end end as number from kv) k
  group by 1, 2, 3, 4, 5, 6, 7
),
grouped as (
  select event, (case when raw_platform = any($6::text[]) then $7::text when raw_platform = any($8::text[]) then $9::text when raw_platform = any($10::text[]) then $11::text else $12::text end collate "C") as platform, version, key, json_type, tracked, value,
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
  where rank <= 12
  group by 1, 2, 3, 4, 5
),
profile as (
select t.event, t.platform, t.version, t.key, t.json_type, t.events,
       case when t.tracked then t.distinct_values end as distinct_values,
       t.min_number, t.max_number, t.fractional,
       case when t.tracked and t.distinct_values <= 50 then coalesce(tops.top_values, '[]'::jsonb) else '[]'::jsonb end as top_values
from totals t
left join tops using (event, platform, version, key, json_type)
),
profile_ranked as (
  select r.*,
         dense_rank() over (partition by event, platform order by key_total desc, key) as key_rank,
         dense_rank() over (partition by platform order by version_total desc, version) as version_rank
  from (
    select p.*, sum(events) over (partition by event, platform, key) as key_total, sum(events) over (partition by platform, version) as version_total
    from profile p
  ) r
),
seen as (
  select r.*, max(key_rank) over (partition by platform) as param_keys, max(version_rank) over (partition by platform) as versions
  from profile_ranked r
)
select event, platform, version, key, json_type, events, distinct_values, min_number, max_number, fractional, top_values, param_keys, versions
from seen
where key_rank <= $13 and version_rank <= $14

-- values: ["pass_purchase_result",["amount_cents"],"2026-03-08T05:00:00.000Z","2026-03-09T04:00:00.000Z",["pass_purchase_result","zone_selected"],["web","Web"],"web",["Android"],"android",["iOS"],"ios","other",200,500]
