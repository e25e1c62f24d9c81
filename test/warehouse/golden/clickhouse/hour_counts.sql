select transform(raw_platform, {p1:Array(String)}, {p2:Array(String)}, {p3:String}) as platform, hour, sum(events) as events, intDiv(max(newest), 1000) as newest_at
from (
  select e."platform" as raw_platform, intDiv(toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) - {p4:Int64}, 3600000000) as hour, count() as events, max(toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC'))) as newest
  from "analytics"."events" as e
  where e."occurred_at" >= {p5:DateTime64(6, 'UTC')} and e."occurred_at" < {p6:DateTime64(6, 'UTC')}
  group by raw_platform, hour
)
group by platform, hour

-- values: {"p1":["web","Web","Android","iOS"],"p2":["web","web","android","ios"],"p3":"other","p4":1772946000000000,"p5":"2026-03-08 05:00:00.000","p6":"2026-03-09 04:00:00.000"}
