-- plumbline state, part 8: an incident can close as late data. When late rows
-- restate a past day, the day is judged again; incidents its first judgement
-- opened that the complete data no longer shows were missing data, not a
-- change, and close with resolution 'late_data' (labelled data delay).
-- Applied inside the state schema (search_path is set by the migrator).
alter table incidents drop constraint incidents_resolution_check;
alter table incidents add constraint incidents_resolution_check check (resolution in ('clean_days', 'withdrawn', 'late_data'));
