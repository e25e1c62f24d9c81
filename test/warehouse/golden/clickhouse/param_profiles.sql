select event, platform, version, key, json_type, events, distinct_values, min_number, max_number, fractional, top_values, param_keys, versions
from (
  select *, max(key_rank) over (partition by platform) as param_keys, max(version_rank) over (partition by platform) as versions
  from (
  select *,
         dense_rank() over (partition by event, platform order by key_total desc, key) as key_rank,
         dense_rank() over (partition by platform order by version_total desc, version) as version_rank
  from (
    select *, sum(events) over (partition by event, platform, key) as key_total, sum(events) over (partition by platform, version) as version_total
    from (
with kv as (
  select event, raw_platform, version, pair.1 as key, pair.2 as raw, multiIf(JSONType(raw) = 'String', 'string', JSONType(raw) in ('Int64', 'UInt64', 'Double'), 'number', JSONType(raw) = 'Bool', 'boolean', JSONType(raw) = 'Null', 'null', JSONType(raw) = 'Array', 'array', 'object') as json_type, multiIf(event = {p1:String}, not has({p2:Array(String)}, key), true) as tracked
  from (
    select if(lengthUTF8(e."event_name") > 128, concat(leftUTF8(e."event_name", 127), '…'), e."event_name") as event, e."platform" as raw_platform, if(coalesce(e."app_version", '') = '*', '', if(lengthUTF8(coalesce(e."app_version", '')) > 128, concat(leftUTF8(coalesce(e."app_version", ''), 127), '…'), coalesce(e."app_version", ''))) as version, e."props" as props
    from "analytics"."events" as e
    where e."occurred_at" >= {p3:DateTime64(6, 'UTC')} and e."occurred_at" < {p4:DateTime64(6, 'UTC')} and has({p5:Array(String)}, event)
  )
  array join arrayMap(kv -> (if(lengthUTF8(kv.1) > 128, concat(leftUTF8(kv.1, 127), '…'), kv.1), kv.2), JSONExtractKeysAndValuesRaw(assumeNotNull(props))) as pair
),
raw_grouped as (
  select event, raw_platform, version, key, json_type, tracked,
         if(tracked and json_type in ('string', 'number', 'boolean'), leftUTF8(if(json_type = 'string', JSONExtractString(raw), raw), 64), null) as value,
         count() as raw_events, min(number) as raw_lowest, max(number) as raw_highest, countIf(number != trunc(number)) as raw_with_fraction
  from (select *, if(json_type = 'number', toFloat64(raw), null) as number from kv)
  group by event, raw_platform, version, key, json_type, tracked, value
),
grouped as (
  select event, transform(raw_platform, {p6:Array(String)}, {p7:Array(String)}, {p8:String}) as platform, version, key, json_type, tracked, value,
         sum(raw_events) as value_events, min(raw_lowest) as lowest, max(raw_highest) as highest, sum(raw_with_fraction) as with_fraction
  from raw_grouped
  group by event, platform, version, key, json_type, tracked, value
)
select event, platform, version, key, json_type, sum(value_events) as events,
       if(min(tracked), count(value), null) as distinct_values,
       min(lowest) as min_number, max(highest) as max_number, sum(with_fraction) as fractional,
       if(min(tracked) and count(value) <= 50, arraySlice(arraySort(v -> (-v.events, v.value), groupArrayIf(CAST((assumeNotNull(value), value_events), 'Tuple(value String, events UInt64)'), value is not null)), 1, 12), []) as top_values
from grouped
group by event, platform, version, key, json_type
    )
  )
  )
)
where key_rank <= {p9:UInt64} and version_rank <= {p10:UInt64}

-- values: {"p1":"pass_purchase_result","p2":["amount_cents"],"p3":"2026-03-08 05:00:00.000","p4":"2026-03-09 04:00:00.000","p5":["pass_purchase_result","zone_selected"],"p6":["web","Web","Android","iOS"],"p7":["web","web","android","ios"],"p8":"other","p9":200,"p10":500}
