with step_events as (
  select person, platform, event_version, at, d0, d1, step
  from (
    select *, multiIf((event = {p2:String} and has({p3:Array(String)}, param_0)), 0, (event = {p4:String} and has({p5:Array(String)}, param_0)), 1, (event = {p6:String} and has({p7:Array(String)}, param_1) and has({p8:Array(String)}, param_2)), 2, -1) as step
    from (
      select coalesce(if(trimBoth(e."user_id", ' \t\r\n') != '', concat('u:', e."user_id"), NULL), if(trimBoth(toString(e."device_id"), ' \t\r\n') != '', concat('d:', toString(e."device_id")), NULL)) as person, transform(e."platform", {p9:Array(String)}, {p10:Array(String)}, {p11:String}) as platform, if(coalesce(e."app_version", '') = '*', '', if(lengthUTF8(coalesce(e."app_version", '')) > 128, concat(leftUTF8(coalesce(e."app_version", ''), 127), '…'), coalesce(e."app_version", ''))) as event_version, toUnixTimestamp64Micro(toDateTime64(e."occurred_at", 6, 'UTC')) as at, if(lengthUTF8(coalesce(e."country", '')) > 128, concat(leftUTF8(coalesce(e."country", ''), 127), '…'), coalesce(e."country", '')) as d0, if(lengthUTF8(coalesce(toString(e."channel"), '')) > 128, concat(leftUTF8(coalesce(toString(e."channel"), ''), 127), '…'), coalesce(toString(e."channel"), '')) as d1, if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, if(has({p12:Array(String)}, event), JSONExtract(e."props", {p13:String}, 'Nullable(String)'), null) as param_0, if(has({p14:Array(String)}, event), JSONExtract(e."props", {p15:String}, 'Nullable(String)'), null) as param_1, if(has({p16:Array(String)}, event), JSONExtract(e."props", {p17:String}, 'Nullable(String)'), null) as param_2
      from "analytics"."events" as e
      where e."occurred_at" >= {p18:DateTime64(6, 'UTC')} and e."occurred_at" < {p19:DateTime64(6, 'UTC')} and has({p20:Array(String)}, event)
    )
  )
  where step >= 0
)
select 'step' as kind, platform, if(grouping(event_version) = 0, event_version, '*') as version, step, count() as events, uniqExact(person) as people
from step_events
where at < {p1:Int64}
group by grouping sets ((platform, event_version, step), (platform, step))

-- values: {"p1":1773028800000000,"p2":"screen_shown","p3":["pass_intro"],"p4":"screen_shown","p5":["zone_picker","zone_v2"],"p6":"pass_purchase_result","p7":["approved"],"p8":["false"],"p9":["web","Web","Android","iOS"],"p10":["web","web","android","ios"],"p11":"other","p12":["screen_shown"],"p13":"view","p14":["pass_purchase_result"],"p15":"outcome","p16":["pass_purchase_result"],"p17":"test","p18":"2026-03-08 05:00:00.000","p19":"2026-03-09 04:30:00.000","p20":["screen_shown","pass_purchase_result"]}
