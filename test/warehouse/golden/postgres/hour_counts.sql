select (case when raw_platform = any($2::text[]) then $3::text when raw_platform = any($4::text[]) then $5::text when raw_platform = any($6::text[]) then $7::text else $8::text end collate "C") as platform, floor(extract(epoch from bin - $1::timestamptz) / 3600)::int as hour,
       sum(events) as events, max(newest_at) as newest_at, sum(no_event_name) as no_event_name, sum(reserved_version) as reserved_version, sum(long_text) as long_text, sum(unreadable_params) as unreadable_params
from (
  select raw_platform, bin, count(*) filter (where reason is distinct from 'no_event_name') as events, max(at) filter (where reason is distinct from 'no_event_name') as newest_at, count(*) filter (where reason = 'no_event_name') as no_event_name, count(*) filter (where reason = 'reserved_version') as reserved_version, count(*) filter (where reason = 'long_text') as long_text, count(*) filter (where reason = 'unreadable_params') as unreadable_params
  from (
    select e."platform"::text as raw_platform, date_bin('1 hour', e."occurred_at", $1::timestamptz) as bin, e."occurred_at" as at,
           case when not coalesce(btrim(e."event_name"::text, E' \t\r\n') <> '', false) then 'no_event_name'
      when coalesce(e."app_version"::text, '') = '*' then 'reserved_version'
      when length(coalesce(e."event_name"::text, '')) > 128 or length(coalesce(e."app_version"::text, '')) > 128 or length(coalesce(e."country"::text, '')) > 128 or length(coalesce(e."channel"::text, '')) > 128 or (e."event_name"::text = any($9::text[]) and coalesce((jsonb_typeof(e."props") = 'object' and exists (select 1 from jsonb_object_keys(e."props") k where length(k) > 128)), false)) then 'long_text'
      when e."event_name"::text = any($9::text[]) and coalesce(jsonb_path_exists(e."props", 'lax $.** ? (@.type() == "number" && (@ >= 1.7976931348623158079372897e308 || @ <= -1.7976931348623158079372897e308))'), false) then 'unreadable_params' end as reason
    from "analytics"."events" e
    where e."occurred_at" >= $1 and e."occurred_at" < $10
  ) r
  group by raw_platform, bin
) g
group by 1, bin

-- values: ["2026-03-08T05:00:00.000Z",["web","Web"],"web",["Android"],"android",["iOS"],"ios","other",["pass_purchase_result","zone_selected"],"2026-03-09T04:00:00.000Z"]
