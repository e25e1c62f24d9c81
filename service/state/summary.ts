import type { Finding } from '../../checks/types.js';
import { quoteIdent, type Query } from '../db/sql.js';

export interface FunnelDaySummary {
  day: string;
  flow: string;
  platform: string;
  entered: number;
  completed: number;
}

/** Entrants and completions per flow, platform and day (all versions), for the day-by-day picture. */
export function funnelSummaryQuery(schema: string, from: string, to: string, lastSteps: Record<string, number>): Query {
  return {
    text: `select to_char(f.day, 'YYYY-MM-DD') as day, f.flow, f.platform,
        sum(f.reached) filter (where f.step = 0)::float8 as entered,
        sum(f.reached) filter (where f.step = l.last_step)::float8 as completed
      from ${quoteIdent(schema)}.funnel_days f
      join unnest($3::text[], $4::int[]) as l(flow, last_step) on l.flow = f.flow
      where f.day between $1 and $2 and f.version = '*' and f.dimension = ''
      group by f.day, f.flow, f.platform order by f.day, f.flow, f.platform`,
    values: [from, to, Object.keys(lastSteps), Object.values(lastSteps)],
  };
}

export interface StoredFinding extends Finding {
  id: number;
}

export function findingsQuery(schema: string, from: string, to: string): Query {
  return {
    text: `select id::int, flow, to_char(day, 'YYYY-MM-DD') as day, check_id as "check", kind, series_key as "seriesKey", metric, platform, version,
        subject, severity, observed, expected, score, direction, to_char(since, 'YYYY-MM-DD') as since, message, excerpt, evidence,
        calendar, muted_reason as muted
      from ${quoteIdent(schema)}.findings where day between $1 and $2 order by day, flow, check_id, series_key`,
    values: [from, to],
  };
}

export function judgedDaysQuery(schema: string, from: string, to: string): Query {
  return {
    text: `select flow, to_char(day, 'YYYY-MM-DD') as day, verdict, reason from ${quoteIdent(schema)}.judged_days
      where day between $1 and $2 order by day, flow`,
    values: [from, to],
  };
}
