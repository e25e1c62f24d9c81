select (case when raw_platform = any($2::text[]) then $3::text when raw_platform = any($4::text[]) then $5::text when raw_platform = any($6::text[]) then $7::text else $8::text end collate "C") as platform, floor(extract(epoch from bin - $1::timestamptz) / 3600)::int as hour,
       sum(events) as events, max(newest_at) as newest_at
from (
  select e."platform"::text as raw_platform, date_bin('1 hour', e."occurred_at", $1::timestamptz) as bin, count(*) as events, max(e."occurred_at") as newest_at
  from "analytics"."events" e
  where e."occurred_at" >= $1 and e."occurred_at" < $9
  group by raw_platform, bin
) g
group by 1, bin

-- values: ["2026-03-08T05:00:00.000Z",["web","Web"],"web",["Android"],"android",["iOS"],"ios","other","2026-03-09T04:00:00.000Z"]
