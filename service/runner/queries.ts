import { quoteIdent, type Query } from '../db/sql.js';

/** The jobs a runner claims: one holder per state schema at a time, across replicas. */
export type RunnerJob = 'daily' | 'digest';

/** Advisory lock name of a job; the state schema is part of it so plumbline setups sharing a server never block each other. */
export function lockName(schema: string, job: RunnerJob): string {
  return `plumbline.runner.${schema}.${job}`;
}

export function tryLockQuery(name: string): Query {
  return { text: 'select pg_try_advisory_lock(hashtextextended($1, 0)) as ok', values: [name] };
}

export function unlockQuery(name: string): Query {
  return { text: 'select pg_advisory_unlock(hashtextextended($1, 0)) as ok', values: [name] };
}

export const DATABASE_NOW: Query = { text: 'select now() as now', values: [] };

export const DEAD_RUNNER_ERROR = 'the runner stopped before finishing (process killed or connection lost)';

/**
 * Marks the passes of `job` left 'running' as abandoned, with the `runs` rows
 * their runner wrote during them. Only called by the holder of the job's
 * claim: no live runner can have such a pass, so its owner died.
 */
export function abandonDeadPassesQuery(schema: string, job: RunnerJob): Query {
  const s = quoteIdent(schema);
  return {
    text: `with dead as (
        update ${s}.runner_passes set status = 'abandoned', finished_at = now(), error = $2
        where job = $1 and status = 'running' returning id, runner, started_at
      ), runs_abandoned as (
        update ${s}.runs r set status = 'abandoned', finished_at = now(), error = $2
        from dead where r.status = 'running' and r.runner = dead.runner and r.started_at >= dead.started_at
        returning r.id
      )
      select (select count(*) from dead)::int as passes, (select count(*) from runs_abandoned)::int as runs`,
    values: [job, DEAD_RUNNER_ERROR],
  };
}

/** Verdicts of the days in [from, to], each flagged when older than the recheck interval (database time). */
export function verdictsQuery(schema: string, from: string, to: string, recheckSeconds: number): Query {
  return {
    text: `select flow, to_char(day, 'YYYY-MM-DD') as day, verdict, judged_at < now() - make_interval(secs => $3) as stale
      from ${quoteIdent(schema)}.judged_days where day between $1 and $2`,
    values: [from, to, recheckSeconds],
  };
}

export function lastJudgedQuery(schema: string, upTo: string): Query {
  return {
    text: `select to_char(max(day), 'YYYY-MM-DD') as day from ${quoteIdent(schema)}.judged_days where verdict = 'judged' and day <= $1`,
    values: [upTo],
  };
}

export function insertPassQuery(schema: string, pass: { job: RunnerJob; slot: string; reason: string; runner: string; days: string[] }): Query {
  return {
    text: `insert into ${quoteIdent(schema)}.runner_passes (job, slot, reason, runner, status, days)
      values ($1, $2, $3, $4, 'running', $5::date[]) returning id::text, started_at`,
    values: [pass.job, pass.slot, pass.reason, pass.runner, pass.days],
  };
}

/** Ends a pass; a pass already marked abandoned (shutdown) keeps that status. */
export function finishPassQuery(schema: string, id: string, status: 'done' | 'failed' | 'abandoned', days: string[], error: string | null): Query {
  return {
    text: `update ${quoteIdent(schema)}.runner_passes set status = $2, days = $3::date[], error = $4, finished_at = now()
      where id = $1 and status = 'running'`,
    values: [id, status, days, error],
  };
}

/** Marks a live pass and the `runs` rows it left unfinished as abandoned (shutdown after the grace period). */
export function abandonPassQuery(schema: string, id: string, runner: string, reason: string): Query {
  const s = quoteIdent(schema);
  return {
    text: `with pass as (
        update ${s}.runner_passes set status = 'abandoned', finished_at = now(), error = $3
        where id = $1 and status = 'running' returning started_at
      ), runs_abandoned as (
        update ${s}.runs r set status = 'abandoned', finished_at = now(), error = $3
        from pass where r.status = 'running' and r.runner = $2 and r.started_at >= pass.started_at
        returning r.id
      )
      select (select count(*) from pass)::int as passes, (select count(*) from runs_abandoned)::int as runs`,
    values: [id, runner, reason],
  };
}

/** A digest slot: whether a pass sent it, how many passes failed, and how long ago (database time) the last one failed. */
export function digestSlotQuery(schema: string, slot: string): Query {
  return {
    text: `select coalesce(bool_or(status = 'done'), false) as done, count(*) filter (where status = 'failed')::int as failures,
        extract(epoch from now() - max(finished_at) filter (where status = 'failed'))::float8 as "failedAgo"
      from ${quoteIdent(schema)}.runner_passes where job = 'digest' and slot = $1`,
    values: [slot],
  };
}

/** End of the last successful pass per job, as Unix time and as age in seconds (database time). */
export function lastSuccessQuery(schema: string): Query {
  return {
    text: `select job, extract(epoch from max(finished_at))::float8 as at, extract(epoch from now() - max(finished_at))::float8 as age
      from ${quoteIdent(schema)}.runner_passes where status = 'done' group by job`,
    values: [],
  };
}

/** Seconds between database now and the newest event any rollup has seen, per platform. */
export function dataLagQuery(schema: string): Query {
  return {
    text: `select platform, extract(epoch from now() - max(newest_at))::float8 as lag
      from ${quoteIdent(schema)}.day_status where newest_at is not null group by platform`,
    values: [],
  };
}
