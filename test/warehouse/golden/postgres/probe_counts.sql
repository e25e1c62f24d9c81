select b.day::text as day, (case when e."platform"::text = any($1::text[]) then $2::text when e."platform"::text = any($3::text[]) then $4::text when e."platform"::text = any($5::text[]) then $6::text else $7::text end collate "C") as platform, count(*) as events
from unnest($8::date[], $9::timestamptz[], $10::timestamptz[]) as b(day, lo, hi)
join "analytics"."events" e on e."occurred_at" >= b.lo and e."occurred_at" < b.hi and coalesce(btrim(e."event_name"::text, E' \t\r\n') <> '', false)
group by b.day, platform

-- values: [["web","Web"],"web",["Android"],"android",["iOS"],"ios","other",["2026-03-07","2026-03-08"],["2026-03-07T05:00:00.000Z","2026-03-08T05:00:00.000Z"],["2026-03-08T05:00:00.000Z","2026-03-09T04:00:00.000Z"]]
