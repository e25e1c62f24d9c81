-- Runs once, when the compose PostgreSQL volume is created: an empty events
-- table in the shape config/plumbline.yaml maps, so plumbline starts cleanly.
-- Load your own events into it, or point `warehouse.events_table` elsewhere.
create schema transit;
create table transit.events (
  occurred_at timestamptz not null,
  event_name text not null,
  user_id text,
  device_id text,
  platform text,
  app_version text,
  props jsonb,
  country text,
  channel text
);
-- Every rollup reads one day: a range on the time column.
create index events_occurred_at on transit.events (occurred_at);
