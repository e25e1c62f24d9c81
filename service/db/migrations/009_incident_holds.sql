-- plumbline state, part 9: days that hold an incident open without being a
-- sighting (hysteresis). A series of an open incident still outside its
-- expected band, though under the finding thresholds ('band'), and a day
-- declared in the calendar ('calendar') are no clean day: the count of clean
-- days that resolves the incident starts after them. One row per incident and
-- day; a rerun of the day replaces its rows (by the flows judged).
-- Applied inside the state schema (search_path is set by the migrator).
create table incident_holds (
  incident_id text not null references incidents (id) on delete cascade,
  day date not null,
  -- The flows judged together that day (a rerun of them replaces the row).
  flows text[] not null,
  reason text not null check (reason in ('band', 'calendar')),
  primary key (incident_id, day)
);
create index incident_holds_day on incident_holds (day);
