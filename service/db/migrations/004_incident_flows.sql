-- plumbline state, part 4: an incident can hold back several flows. A data
-- delay stops the events of every flow at once, so it is one incident (and one
-- chat message) listing the flows it holds back, not one per flow. Applied
-- inside the state schema (search_path is set by the migrator).

-- The flows an incident holds back and their owners, in the order first seen.
-- `flow` and `owner` stay: the first of each (the id starts with that flow).
alter table incidents add column flows text[];
alter table incidents add column owners text[];
update incidents set flows = array[flow], owners = array[owner];
alter table incidents alter column flows set not null;
alter table incidents alter column owners set not null;
drop index incidents_unresolved;
create index incidents_flows on incidents using gin (flows);
-- A fingerprint names its flow, except a data delay's: episodes are found by fingerprint alone.
drop index incidents_fingerprint;
create index incidents_fingerprint on incidents (fingerprint, opened_day);

-- A sighting is what every flow judged on the day saw of the incident: the
-- flows that saw it replace the one flow. Judging a day again replaces the
-- day's sightings of the flows judged.
alter table incident_days add column flows text[];
update incident_days set flows = array[flow];
alter table incident_days alter column flows set not null;
drop index incident_days_flow_day;
alter table incident_days drop column flow;
create index incident_days_day on incident_days (day);

-- Every flow of a day is judged in one transaction, so a 'judge' run in `runs`
-- is now one business day of every flow, its flow null (like a rollup's).
