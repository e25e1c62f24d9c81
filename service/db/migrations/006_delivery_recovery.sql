-- plumbline state, part 5: delivery that neither waits inside a pass nor posts twice.
-- Applied inside the state schema (search_path is set by the migrator).

-- 'unconfirmed': a sender claimed the message and stopped before recording the
-- answer (killed, or the state database went away), and the chat target does
-- not promise to show a message once per Idempotency-Key. The message may have
-- been shown: it is not posted again on its own (a missed acknowledgement is
-- preferred over a second post); `plumbline outbox --retry ID` sends it again.
alter table outbox drop constraint outbox_state_check;
alter table outbox add constraint outbox_state_check check (state in ('pending', 'sending', 'sent', 'parked', 'unconfirmed'));

-- A receiver's `Retry-After`: nothing is posted to the channel before `until`.
-- Kept here rather than in a sender's memory so every replica and the next
-- drain honour it, and no drain sits waiting it out.
create table channel_pauses (
  channel text primary key check (channel in ('chat')),
  until timestamptz not null,
  reason text not null
);

-- A digest pass may also be a retry: after a failure (with backoff) or for a
-- slot missed while no replica was running.
alter table runner_passes drop constraint runner_passes_reason_check;
alter table runner_passes add constraint runner_passes_reason_check check (reason in ('start', 'schedule', 'retry'));
