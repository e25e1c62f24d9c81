with per_person as (
  select e."event_name" as event, transform(e."platform", {p5:Array(String)}, {p6:Array(String)}, {p7:String}) as platform, coalesce(concat('u:', e."user_id"), concat('d:', toString(e."device_id"))) as person, count() as person_events, min(coalesce(e."country", '')) as d0, min(coalesce(toString(e."channel"), '')) as d1
  from "analytics"."events" as e
  where e."occurred_at" >= {p1:DateTime64(6, 'UTC')} and e."occurred_at" < {p2:DateTime64(6, 'UTC')}
  group by event, platform, person
)
select e."event_name" as event, transform(e."platform", {p8:Array(String)}, {p9:Array(String)}, {p10:String}) as platform, coalesce(e."app_version", '') as version, '' as dimension, '' as value, count() as events, uniqExact(coalesce(concat('u:', e."user_id"), concat('d:', toString(e."device_id")))) as people
from "analytics"."events" as e
where e."occurred_at" >= {p1:DateTime64(6, 'UTC')} and e."occurred_at" < {p2:DateTime64(6, 'UTC')}
group by event, platform, version
union all
select event, platform, cell.1 as version, cell.2 as dimension, cell.3 as value, sum(person_events) as events, count(person) as people
from per_person
array join [('*', '', ''), ('*', {p3:String}, d0), ('*', {p4:String}, d1)] as cell
group by event, platform, version, dimension, value

-- values: {"p1":"2026-03-08 05:00:00.000","p2":"2026-03-09 04:00:00.000","p3":"country","p4":"channel","p5":["web","Web","Android","iOS"],"p6":["web","web","android","ios"],"p7":"other","p8":["web","Web","Android","iOS"],"p9":["web","web","android","ios"],"p10":"other"}
