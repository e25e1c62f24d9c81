-- plumbline state, part 5: the day's bad rows per platform, by reason
-- (service/warehouse/mapping.ts, BAD_ROW_REASONS): {"no_event_name": 3, ...}.
alter table day_status add column bad_rows jsonb not null default '{}';
