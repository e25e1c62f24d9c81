-- plumbline state, part 6: silences announced as they grow, and backfills that
-- speak once. Applied inside the state schema (search_path is set by the migrator).

-- How many days an incident had been seen when it was last announced: a data
-- delay is announced again when its held-back days have doubled since.
alter table incidents add column notified_days_seen integer;
update incidents set notified_days_seen = days_seen where notified_severity is not null;

-- 'still_held_back': a data delay that keeps holding its flows back.
-- 'backfill': the one summary of a backfill judged without chat messages; it
-- belongs to no incident, and messages queued after it wait for it.
alter table outbox alter column incident_id drop not null;
alter table outbox drop constraint outbox_event_check;
alter table outbox add constraint outbox_event_check check (event in ('opened', 'severity_raised', 'still_held_back', 'resolved', 'backfill'));
alter table outbox add constraint outbox_incident_check check ((incident_id is null) = (event = 'backfill'));
