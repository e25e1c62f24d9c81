/**
 * Reads of the state schema that only the human pages need. Incidents,
 * sightings and the outbox are read through their own modules
 * (service/incidents/store.ts, service/delivery/outbox.ts).
 */
import type { FindingMeasure } from '../../../checks/causes/measures.js';
import type { Day } from '../../../checks/types.js';
import { quoteIdent, type Query } from '../../db/sql.js';

export interface LatestVerdict {
  flow: string;
  day: Day;
  verdict: 'judged' | 'not_ready';
  reason: string | null;
}

/** The newest verdict of each flow. */
export function latestVerdictsQuery(schema: string): Query {
  return {
    text: `select distinct on (flow) flow, to_char(day, 'YYYY-MM-DD') as day, verdict, reason
      from ${quoteIdent(schema)}.judged_days order by flow, day desc`,
    values: [],
  };
}

export interface RunRow {
  id: number;
  kind: string;
  day: Day;
  flow: string | null;
  status: string;
  startedAt: Date;
  /** Seconds from start to finish; null while running. */
  seconds: number | null;
  error: string | null;
}

/** The newest units of work (rollups and judgements), newest first; `failedOnly`: those that failed or were abandoned. */
export function recentRunsQuery(schema: string, limit: number, failedOnly = false): Query {
  return {
    text: `select id::int as id, kind, to_char(day, 'YYYY-MM-DD') as day, flow, status, started_at as "startedAt",
        extract(epoch from finished_at - started_at)::float8 as seconds, error
      from ${quoteIdent(schema)}.runs ${failedOnly ? `where status in ('failed', 'abandoned')` : ''} order by id desc limit $1`,
    values: [limit],
  };
}

export interface DayStatusNote {
  day: Day;
  platform: string;
  /** Events of the day, less the rows set aside. */
  events: number;
  /** Rows per reason (service/warehouse/mapping.ts, BAD_ROW_REASONS). */
  badRows: Record<string, number>;
  /** Row limits reached: distinct values seen and kept (ROW_LIMITS). */
  overLimits: Record<string, { seen: number; kept: number }>;
}

/** Platforms of the newest `days` rolled-up days that had rows plumbline could not use or reached a row limit, newest first. */
export function dayStatusNotesQuery(schema: string, days: number): Query {
  const s = quoteIdent(schema);
  return {
    text: `select to_char(day, 'YYYY-MM-DD') as day, platform, events::float8 as events, bad_rows as "badRows", over_limits as "overLimits"
      from ${s}.day_status
      where day >= (select max(day) from ${s}.day_status) - ($1::int - 1)
        and (exists (select 1 from jsonb_each_text(bad_rows) b where b.value::bigint > 0) or over_limits <> '{}'::jsonb)
      order by day desc, platform collate "C"`,
    values: [days],
  };
}

/** The measure a per-version split shows; mirrors the cause analysis's measures (checks/causes/measures.ts). */
/** Numerator and denominator of a measure on one day for one app version ('*': the platform total). */
export interface SplitRow {
  day: Day;
  version: string;
  num: number;
  den: number;
}

/** The measure per day and app version on one platform over [from, to], from the rollups (never raw events). */
export function splitQuery(schema: string, o: { flow: string; lastStep: number; platform: string; measure: FindingMeasure; anyStepEntry: boolean; from: Day; to: Day }): Query {
  const s = quoteIdent(schema);
  const day = `to_char(day, 'YYYY-MM-DD') as day`;
  const m = o.measure;
  switch (m.kind) {
    case 'step_conversion':
    case 'flow_conversion': {
      const [den, num] = m.kind === 'step_conversion' ? [m.step - 1, m.step] : [0, o.lastStep];
      // With entry: any_step, people who started at step k did not come from step k - 1.
      const reached = m.kind === 'step_conversion' && o.anyStepEntry ? 'reached - entered' : 'reached';
      return {
        text: `select ${day}, version, coalesce(sum(${reached}) filter (where step = $4), 0)::float8 as num, coalesce(sum(reached) filter (where step = $3), 0)::float8 as den
          from ${s}.funnel_days where flow = $1 and platform = $2 and dimension = '' and step in ($3, $4) and day between $5 and $6
          group by day, version`,
        values: [o.flow, o.platform, den, num, o.from, o.to],
      };
    }
    case 'step_people':
      return {
        text: `select ${day}, version, coalesce(sum(people) filter (where step = $3), 0)::float8 as num, coalesce(sum(people) filter (where step = 0), 0)::float8 as den
          from ${s}.step_days where flow = $1 and platform = $2 and step in (0, $3) and day between $4 and $5
          group by day, version`,
        values: [o.flow, o.platform, m.step, o.from, o.to],
      };
    case 'event_people':
      return {
        text: `select to_char(coalesce(e.day, f.day), 'YYYY-MM-DD') as day, coalesce(e.version, f.version) as version, coalesce(e.people, 0)::float8 as num, coalesce(f.people, 0)::float8 as den
          from (select day, version, people from ${s}.event_days where event = $3 and platform = $2 and dimension = '' and day between $4 and $5) e
          full join (select day, version, people from ${s}.step_days where flow = $1 and platform = $2 and step = 0 and day between $4 and $5) f
            on f.day = e.day and f.version = e.version`,
        values: [o.flow, o.platform, m.event, o.from, o.to],
      };
    case 'events_per_person':
      return {
        text: `select ${day}, version, events::float8 as num, people::float8 as den from ${s}.event_days
          where event = $1 and platform = $2 and dimension = '' and day between $3 and $4`,
        values: [m.event, o.platform, o.from, o.to],
      };
  }
}
