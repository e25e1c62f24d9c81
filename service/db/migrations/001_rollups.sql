-- plumbline state, part 1: runs and the daily rollups the checks read.
-- Applied inside the state schema (search_path is set by the migrator).

create table runs (
  id bigserial primary key,
  -- 'rollup' (one business day, all flows), 'judge' (one flow and day)
  kind text not null,
  day date not null,
  flow text,
  status text not null check (status in ('running', 'done', 'failed', 'abandoned')),
  runner text not null,
  started_at timestamptz not null default now(),
  finished_at timestamptz,
  error text,
  stats jsonb not null default '{}'
);
create index runs_day on runs (day, kind);

-- Events and distinct people per event x platform x version, plus one breakdown
-- per configured dimension (version '*' = all versions, dimension '' = none).
create table event_days (
  day date not null,
  event text not null,
  platform text not null,
  version text not null,
  dimension text not null,
  value text not null,
  events bigint not null,
  people bigint not null,
  primary key (day, event, platform, version, dimension, value)
);

create table param_days (
  day date not null,
  event text not null,
  platform text not null,
  version text not null,
  key text not null,
  json_type text not null,
  events bigint not null,
  -- null: the key has too many distinct values to profile
  distinct_values integer,
  top_values jsonb not null,
  min_number double precision,
  max_number double precision,
  fractional bigint not null default 0,
  primary key (day, event, platform, version, key, json_type)
);

-- People reaching each step, for the cohort that entered the flow on `day`.
create table funnel_days (
  day date not null,
  flow text not null,
  platform text not null,
  version text not null,
  dimension text not null,
  value text not null,
  step smallint not null,
  entered bigint not null,
  reached bigint not null,
  seconds_median double precision,
  seconds_p90 double precision,
  timed bigint not null,
  primary key (day, flow, platform, version, dimension, value, step)
);

-- Events and people matching each step's definition, in any order.
create table step_days (
  day date not null,
  flow text not null,
  step smallint not null,
  platform text not null,
  version text not null,
  events bigint not null,
  people bigint not null,
  primary key (day, flow, step, platform, version)
);

-- What the freshness probe saw of each day, per platform.
create table day_status (
  day date not null,
  platform text not null,
  events bigint not null,
  newest_at timestamptz,
  hourly integer[] not null,
  previous_events bigint,
  rolled_up_at timestamptz not null,
  primary key (day, platform)
);

-- What the checks found, per flow and judged day. A rerun of a day replaces them.
create table findings (
  id bigserial primary key,
  flow text not null,
  day date not null,
  check_id text not null,
  kind text not null,
  series_key text not null,
  metric text not null,
  platform text,
  version text,
  subject jsonb not null,
  severity text not null,
  observed double precision not null,
  expected jsonb not null,
  score double precision not null,
  direction text not null,
  since date,
  message text not null,
  excerpt jsonb not null,
  evidence jsonb not null default '{}',
  calendar text,
  muted_reason text,
  created_at timestamptz not null default now(),
  unique (flow, day, check_id, series_key, kind)
);
create index findings_series on findings (flow, series_key, day);

-- Which (flow, day) pairs have been judged, and whether the day was complete enough.
create table judged_days (
  flow text not null,
  day date not null,
  verdict text not null check (verdict in ('judged', 'not_ready')),
  reason text,
  judged_at timestamptz not null default now(),
  primary key (flow, day)
);
