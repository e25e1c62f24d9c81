select event, platform, version, dimension, value, events, people, event_names, versions, dimension_values
from (
  select *,
         max(event_rank) over (partition by platform) as event_names, max(version_rank) over (partition by platform) as versions,
         max(value_rank) over (partition by platform) as dimension_values
  from (
  select *,
         dense_rank() over (partition by platform order by has({p11:Array(String)}, event) desc, event_total desc, event) as event_rank,
         if(version != '*' and dimension = '', dense_rank() over (partition by platform, version != '*' and dimension = '' order by version_total desc, version), NULL) as version_rank,
         if(dimension != '', dense_rank() over (partition by platform, dimension order by value_total desc, value), NULL) as value_rank
  from (
    select *,
           sumIf(events, version = '*' and dimension = '') over (partition by platform, event) as event_total,
           sumIf(events, version != '*' and dimension = '') over (partition by platform, version) as version_total,
           sum(events) over (partition by platform, dimension, value) as value_total
    from (
with per_person as (
  select if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, transform(e."platform", {p5:Array(String)}, {p6:Array(String)}, {p7:String}) as platform, coalesce(if(trimBoth(e."user_id", ' \t\r\n') != '', concat('u:', e."user_id"), NULL), if(trimBoth(toString(e."device_id"), ' \t\r\n') != '', concat('d:', toString(e."device_id")), NULL)) as person, count() as person_events, min(if(lengthUTF8(coalesce(e."country", '')) > 128, concat(leftUTF8(coalesce(e."country", ''), 127), '…'), coalesce(e."country", ''))) as d0, min(if(lengthUTF8(coalesce(toString(e."channel"), '')) > 128, concat(leftUTF8(coalesce(toString(e."channel"), ''), 127), '…'), coalesce(toString(e."channel"), ''))) as d1
  from "analytics"."events" as e
  where e."occurred_at" >= {p1:DateTime64(6, 'UTC')} and e."occurred_at" < {p2:DateTime64(6, 'UTC')} and coalesce(trimBoth(e."event_name", ' \t\r\n') != '', false)
  group by event, platform, person
)
select if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, transform(e."platform", {p8:Array(String)}, {p9:Array(String)}, {p10:String}) as platform, if(coalesce(e."app_version", '') = '*', '', if(lengthUTF8(coalesce(e."app_version", '')) > 128, concat(leftUTF8(coalesce(e."app_version", ''), 127), '…'), coalesce(e."app_version", ''))) as version, '' as dimension, '' as value, count() as events, uniqExact(coalesce(if(trimBoth(e."user_id", ' \t\r\n') != '', concat('u:', e."user_id"), NULL), if(trimBoth(toString(e."device_id"), ' \t\r\n') != '', concat('d:', toString(e."device_id")), NULL))) as people
from "analytics"."events" as e
where e."occurred_at" >= {p1:DateTime64(6, 'UTC')} and e."occurred_at" < {p2:DateTime64(6, 'UTC')} and coalesce(trimBoth(e."event_name", ' \t\r\n') != '', false)
group by event, platform, version
union all
select event, platform, cell.1 as version, cell.2 as dimension, cell.3 as value, sum(person_events) as events, count(person) as people
from per_person
array join [('*', '', ''), ('*', {p3:String}, d0), ('*', {p4:String}, d1)] as cell
group by event, platform, version, dimension, value
    )
  )
  )
)
where (event_rank <= {p12:UInt64} or has({p11:Array(String)}, event))
  and coalesce(version_rank, 1) <= {p13:UInt64} and coalesce(value_rank, 1) <= {p14:UInt64}

-- values: {"p1":"2026-03-08 05:00:00.000","p2":"2026-03-09 04:00:00.000","p3":"country","p4":"channel","p5":["web","Web","Android","iOS"],"p6":["web","web","android","ios"],"p7":"other","p8":["web","Web","Android","iOS"],"p9":["web","web","android","ios"],"p10":"other","p11":[],"p12":5000,"p13":500,"p14":1000}
