select {p3:Array(String)}[day_index] as day, platform, count() as events
from (
  select arrayFirstIndex((lo, hi) -> toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) >= lo and toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) < hi, {p1:Array(Int64)}, {p2:Array(Int64)}) as day_index, transform(e."platform", {p4:Array(String)}, {p5:Array(String)}, {p6:String}) as platform
  from "analytics"."events" as e
  where e."occurred_at" >= {p7:DateTime64(6, 'UTC')} and e."occurred_at" < {p8:DateTime64(6, 'UTC')} and coalesce(trimBoth(e."event_name", ' \t\r\n') != '', false)
)
where day_index > 0
group by day, platform

-- values: {"p1":[1772859600000000,1772946000000000],"p2":[1772946000000000,1773028800000000],"p3":["2026-03-07","2026-03-08"],"p4":["web","Web","Android","iOS"],"p5":["web","web","android","ios"],"p6":"other","p7":"2026-03-07 05:00:00.000","p8":"2026-03-09 04:00:00.000"}
