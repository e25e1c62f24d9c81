select transform(raw_platform, {p1:Array(String)}, {p2:Array(String)}, {p3:String}) as platform, hour, sum(events) as events, if(max(newest) = 0, NULL, intDiv(max(newest), 1000)) as newest_at, sum(no_event_name) as no_event_name, sum(reserved_version) as reserved_version, sum(long_text) as long_text, sum(unreadable_params) as unreadable_params
from (
  select raw_platform, hour, countIf(coalesce(reason, '') != 'no_event_name') as events, maxIf(at, coalesce(reason, '') != 'no_event_name') as newest, countIf(reason = 'no_event_name') as no_event_name, countIf(reason = 'reserved_version') as reserved_version, countIf(reason = 'long_text') as long_text, countIf(reason = 'unreadable_params') as unreadable_params
  from (
    select e."platform" as raw_platform, intDiv(toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) - {p4:Int64}, 3600000000) as hour, toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) as at,
           multiIf(not coalesce(trimBoth(e."event_name", ' \t\r\n') != '', false), 'no_event_name',
      coalesce(e."app_version", '') = '*', 'reserved_version',
      lengthUTF8(coalesce(e."event_name", '')) > 128 or lengthUTF8(coalesce(e."app_version", '')) > 128 or lengthUTF8(coalesce(e."country", '')) > 128 or lengthUTF8(coalesce(toString(e."channel"), '')) > 128 or (has({p5:Array(String)}, e."event_name") and arrayExists(k -> lengthUTF8(k) > 128, JSONExtractKeys(coalesce(e."props", '')))), 'long_text',
      has({p5:Array(String)}, e."event_name") and coalesce(e."props", '') != '' and not isValidJSON(coalesce(e."props", '')), 'unreadable_params', NULL) as reason
    from "analytics"."events" as e
    where e."occurred_at" >= {p6:DateTime64(6, 'UTC')} and e."occurred_at" < {p7:DateTime64(6, 'UTC')}
  )
  group by raw_platform, hour
)
group by platform, hour

-- values: {"p1":["web","Web","Android","iOS"],"p2":["web","web","android","ios"],"p3":"other","p4":1772946000000000,"p5":["pass_purchase_result","zone_selected"],"p6":"2026-03-08 05:00:00.000","p7":"2026-03-09 04:00:00.000"}
