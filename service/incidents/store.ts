/**
 * Reads of the incident tables, shared by the incident lifecycle, the digest,
 * the CLI and the incident pages.
 */
import type { Day } from '../../checks/types.js';
import { quoteIdent, type Db, type Query } from '../db/sql.js';
import type { Incident, Sighting } from './types.js';

const day = (column: string, as: string) => `to_char(${column}, 'YYYY-MM-DD') as "${as}"`;

const INCIDENT_COLUMNS = [
  'id',
  'fingerprint',
  'flow',
  'owner',
  'flows',
  'owners',
  'status',
  'severity',
  'muted',
  'title',
  'subject',
  'platform',
  'version',
  'cause_label as "causeLabel"',
  day('since', 'since'),
  day('opened_day', 'openedDay'),
  day('last_seen_day', 'lastSeenDay'),
  'days_seen as "daysSeen"',
  day('resolved_day', 'resolvedDay'),
  'resolution',
  'notified_severity as "notifiedSeverity"',
  'last_notified_at as "lastNotifiedAt"',
  'opened_at as "openedAt"',
  'updated_at as "updatedAt"',
  'resolved_at as "resolvedAt"',
].join(', ');

type IncidentRow = Omit<Incident, 'lastNotifiedAt' | 'openedAt' | 'updatedAt' | 'resolvedAt'> & {
  lastNotifiedAt: Date | null;
  openedAt: Date;
  updatedAt: Date;
  resolvedAt: Date | null;
};

function toIncident(row: IncidentRow): Incident {
  return {
    ...row,
    lastNotifiedAt: row.lastNotifiedAt?.toISOString() ?? null,
    openedAt: row.openedAt.toISOString(),
    updatedAt: row.updatedAt.toISOString(),
    resolvedAt: row.resolvedAt?.toISOString() ?? null,
  };
}

export async function queryIncidents(db: Db, query: Query): Promise<Incident[]> {
  const { rows } = await db.query<IncidentRow>(query);
  return rows.map(toIncident);
}

export async function loadIncident(db: Db, schema: string, id: string): Promise<{ incident: Incident; sightings: Sighting[] } | undefined> {
  const [incident] = await queryIncidents(db, { text: `select ${INCIDENT_COLUMNS} from ${quoteIdent(schema)}.incidents where id = $1`, values: [id] });
  if (!incident) return undefined;
  return { incident, sightings: await loadSightings(db, schema, [id]) };
}

export async function loadIncidents(db: Db, schema: string, ids: string[]): Promise<Incident[]> {
  return await queryIncidents(db, { text: `select ${INCIDENT_COLUMNS} from ${quoteIdent(schema)}.incidents where id = any($1) order by id`, values: [ids] });
}

/** Incidents holding back any of `flows` that were unresolved at some point of [from, to], newest first. */
export async function listIncidents(db: Db, schema: string, options: { flows: string[]; from: Day; to: Day }): Promise<Incident[]> {
  return await queryIncidents(db, {
    text: `select ${INCIDENT_COLUMNS} from ${quoteIdent(schema)}.incidents
      where flows && $1::text[] and opened_day <= $3 and (resolved_day is null or resolved_day >= $2)
      order by opened_day desc, id`,
    values: [options.flows, options.from, options.to],
  });
}

/** Sightings of the given incidents, oldest first. */
export async function loadSightings(db: Db, schema: string, ids: string[]): Promise<Sighting[]> {
  const { rows } = await db.query<Sighting>({
    text: `select incident_id as "incidentId", flows, ${day('day', 'day')}, ${day('since', 'since')}, severity, muted, title, cause, symptoms
      from ${quoteIdent(schema)}.incident_days where incident_id = any($1) order by incident_id, day`,
    values: [ids],
  });
  return rows;
}

/** The latest sighting of each incident. */
export async function latestSightings(db: Db, schema: string, ids: string[]): Promise<Map<string, Sighting>> {
  const { rows } = await db.query<Sighting>({
    text: `select distinct on (incident_id) incident_id as "incidentId", flows, ${day('day', 'day')}, ${day('since', 'since')}, severity, muted, title, cause, symptoms
      from ${quoteIdent(schema)}.incident_days where incident_id = any($1) order by incident_id, day desc`,
    values: [ids],
  });
  return new Map(rows.map((row) => [row.incidentId, row]));
}

/** Days of an open incident's sightings whose series the checks are asked about (hysteresis: `CheckInput.open`). */
export const OPEN_SERIES_DAYS = 14;

/**
 * The series keys each of `flows` holds in its unresolved incidents (opened
 * before `day`), from their sightings of the last OPEN_SERIES_DAYS days: the
 * series the checks say are still outside their band (`CheckModule.outside`).
 */
export function openSeriesQuery(schema: string, flows: readonly string[], day: Day): Query {
  const s = quoteIdent(schema);
  return {
    text: `select distinct f->>'flow' as flow, f->>'seriesKey' as "seriesKey"
      from ${s}.incidents i
      join ${s}.incident_days d on d.incident_id = i.id and d.day < $2 and d.day >= $2::date - $3::int
      cross join lateral jsonb_array_elements(d.symptoms) as f
      where i.status <> 'resolved' and i.flows && $1::text[] and i.opened_day < $2 and f->>'flow' = any($1::text[])`,
    values: [flows, day, OPEN_SERIES_DAYS],
  };
}

export async function openSeries(db: Db, schema: string, flows: readonly string[], day: Day): Promise<Map<string, string[]>> {
  const { rows } = await db.query<{ flow: string; seriesKey: string }>(openSeriesQuery(schema, flows, day));
  const byFlow = new Map<string, string[]>();
  for (const row of rows) byFlow.set(row.flow, [...(byFlow.get(row.flow) ?? []), row.seriesKey]);
  return byFlow;
}
