-- plumbline state, part 3: the passes `plumbline serve` ran on its schedule.
-- Applied inside the state schema (search_path is set by the migrator).

-- One row per pass that claimed its job. The daily pass runs every due business
-- day in order; the digest pass runs once per slot across replicas. A 'running'
-- row found by the next claimant belongs to a runner that died: it is marked
-- 'abandoned' and its days are run again.
create table runner_passes (
  id bigserial primary key,
  job text not null check (job in ('daily', 'digest')),
  -- daily: the newest settled business day; digest: the local day it was due.
  slot date not null,
  reason text not null check (reason in ('start', 'schedule')),
  runner text not null,
  status text not null check (status in ('running', 'done', 'failed', 'abandoned')),
  -- The business days this pass ran (daily), oldest first.
  days date[] not null default '{}',
  started_at timestamptz not null default now(),
  finished_at timestamptz,
  error text
);
create index runner_passes_job on runner_passes (job, status, finished_at);
