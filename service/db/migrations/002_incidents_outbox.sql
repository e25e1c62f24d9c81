-- plumbline state, part 2: incidents, their daily sightings, the delivery outbox
-- and the record of weekly digests sent. Applied inside the state schema
-- (search_path is set by the migrator). Written by service/incidents/ in the same
-- transaction as the findings of a judged (flow, day); read by the sender, the
-- digest and the incident pages.

-- One row per incident: the same fingerprint (flow, cause label, subject,
-- platform, version) seen on one or more judged days, until it stays away for
-- `incidents.resolve_after_days` judged days of its flow.
create table incidents (
  -- '<flow>-<yyyymmdd of the day it opened>-<8 hex of the fingerprint>': stable
  -- (a rerun derives the same id), URL-safe; the page is <http.public_url>/incidents/<id>.
  id text primary key,
  fingerprint text not null,
  flow text not null,
  owner text not null,
  -- 'open': seen on one judged day so far; 'ongoing': seen on two or more; 'resolved'.
  status text not null check (status in ('open', 'ongoing', 'resolved')),
  -- Highest severity of any sighting (page > warn > note).
  severity text not null check (severity in ('page', 'warn', 'note')),
  -- The latest sighting's symptoms were all muted: recorded, never announced.
  muted boolean not null,
  -- From the latest sighting (plain text from client data: escape when rendering).
  title text not null,
  subject text not null,
  platform text,
  version text,
  cause_label text not null,
  -- First anomalous day among the symptoms of any sighting (may precede opened_day).
  since date not null,
  -- First and latest judged day it was seen, and on how many judged days.
  opened_day date not null,
  last_seen_day date not null,
  days_seen integer not null,
  -- Set when resolved: 'clean_days' (absent for resolve_after_days judged days) or
  -- 'withdrawn' (a rerun of its only days no longer shows it).
  resolved_day date,
  resolution text check (resolution in ('clean_days', 'withdrawn')),
  -- Severity last announced in chat; null while it has never been announced (muted).
  notified_severity text check (notified_severity in ('page', 'warn', 'note')),
  -- When the last announcement was queued: caps repeats to one per incidents.repeat_after.
  last_notified_at timestamptz,
  opened_at timestamptz not null,
  updated_at timestamptz not null,
  resolved_at timestamptz,
  check ((status = 'resolved') = (resolved_day is not null))
);
create index incidents_fingerprint on incidents (flow, fingerprint, opened_day);
create index incidents_unresolved on incidents (flow) where status <> 'resolved';
create index incidents_opened on incidents (opened_day);
create index incidents_resolved on incidents (resolved_day);

-- Each judged day an incident was seen: what was seen that day. A rerun of
-- (flow, day) replaces that day's rows, so the incident's aggregates above are
-- always recomputed from here.
create table incident_days (
  incident_id text not null references incidents (id) on delete cascade,
  flow text not null,
  day date not null,
  -- First anomalous day among that day's symptoms.
  since date not null,
  severity text not null check (severity in ('page', 'warn', 'note')),
  muted boolean not null,
  title text not null,
  -- checks/causes/types.ts Cause: label, confidence, sentence, platform, version, segment, evidence.
  cause jsonb not null,
  -- checks/types.ts Finding[]: aggregates only (counts, rates, parameter keys and
  -- low-cardinality values), never person or device ids.
  symptoms jsonb not null,
  primary key (incident_id, day)
);
create index incident_days_flow_day on incident_days (flow, day);

-- Messages to deliver, written in the same transaction as the incident change
-- that causes them. One per (incident, event, day): a rerun cannot add a second.
create table outbox (
  id bigserial primary key,
  channel text not null check (channel in ('chat')),
  incident_id text not null references incidents (id) on delete cascade,
  event text not null check (event in ('opened', 'severity_raised', 'resolved')),
  day date not null,
  -- Sent with every attempt (Idempotency-Key header), the same on every retry.
  idempotency_key text not null unique,
  -- The rendered message, fixed when queued, so a retry sends the same bytes.
  payload jsonb not null,
  -- One plain line for the CLI and the status page.
  summary text not null,
  -- pending -> sending (claimed, being posted) -> sent; parked after
  -- delivery.max_attempts failures or a permanent refusal, until `plumbline outbox --retry`.
  state text not null default 'pending' check (state in ('pending', 'sending', 'sent', 'parked')),
  attempts integer not null default 0,
  next_attempt_at timestamptz not null,
  -- A 'sending' row whose lease has passed belongs to a sender that died: it is
  -- posted again with the same idempotency key.
  lease_until timestamptz,
  claimed_by text,
  last_error text,
  created_at timestamptz not null,
  sent_at timestamptz,
  parked_at timestamptz,
  unique (incident_id, event, day)
);
create index outbox_due on outbox (channel, id) where state in ('pending', 'sending');
create index outbox_parked on outbox (id) where state = 'parked';

-- Weekly digests per owner: 'sending' is written before the SMTP transaction and
-- 'sent' after it; the message id is stable so a resend after a crash carries the same one.
create table digest_sends (
  week date not null,
  owner text not null,
  message_id text not null,
  recipients text[] not null,
  state text not null check (state in ('sending', 'sent')),
  updated_at timestamptz not null,
  primary key (week, owner)
);
