/**
 * What the weekly digest says, read from the state tables: per owner and flow,
 * end-to-end conversion this week against the previous four (per platform),
 * step drop-off, incidents opened and resolved, schema changes, and the noise
 * of each check. Weeks run Monday to Sunday in the business calendar.
 */
import type pg from 'pg';
import type { Day, FlowDefinition, Finding } from '../../checks/types.js';
import { addDays, weekday } from '../../checks/time.js';
import type { MainConfig } from '../config/schema.js';
import { quoteIdent } from '../db/sql.js';
import { latestSightings, listIncidents } from '../incidents/store.js';
import { incidentUrl, type Incident, type Sighting } from '../incidents/types.js';
import { isFractionMetric, presentIncident, rankSymptoms, type IncidentPresentation } from '../present/present.js';
import { loadValuePolicy, paramKeysOf, valuesShown } from '../present/privacy.js';

/** What the digest needs of the runtime. */
export interface DigestRuntime {
  state: pg.Pool;
  stateSchema: string;
  timezone: string;
  flows: FlowDefinition[];
  config: { main: MainConfig; flows: Array<{ config: { flow: string; title?: string | undefined } }> };
}

/** Weeks compared against the digest's week. */
export const BASELINE_WEEKS = 4;

export interface Rate {
  entered: number;
  completed: number;
  /** completed / entered; null without entrants. */
  rate: number | null;
}

export interface DigestIncident {
  incident: Incident;
  presentation: IncidentPresentation;
  url: string;
  /** The series of the symptom that speaks for it, for a chart. */
  excerpt: Finding['excerpt'];
  percent: boolean;
}

export interface SchemaChange {
  firstDay: Day;
  platform: string | null;
  version: string | null;
  subject: string;
  kind: string;
  /** The check's message; null when parameter values are hidden for its key. */
  message: string | null;
}

export interface NoiseRow {
  check: string;
  /** Unmuted findings (series x days flagged). */
  raised: number;
  muted: number;
  /** Incidents opened this week with a symptom from this check. */
  incidents: number;
  /** Of those, seen on one day only and already resolved. */
  oneDay: number;
}

export interface DigestFlow {
  id: string;
  title: string;
  platforms: string[];
  steps: string[];
  conversion: Array<{ platform: string; week: Rate; baseline: Rate }>;
  /** Conversion per platform for each of the five weeks, oldest first. */
  weekly: Array<{ week: Day; platform: string; conversion: number | null }>;
  /** Share of entrants reaching each step, per platform: this week and the baseline weeks. */
  dropOff: Array<{ step: string; platforms: Array<{ platform: string; week: number | null; baseline: number | null }> }>;
  opened: DigestIncident[];
  resolved: DigestIncident[];
  schemaChanges: SchemaChange[];
  noise: NoiseRow[];
}

export interface Digest {
  owner: string;
  recipients: string[];
  /** Monday. */
  week: Day;
  /** Sunday. */
  weekEnd: Day;
  flows: DigestFlow[];
  publicUrl: string;
  hideValues: boolean;
}

/** The Monday starting the week that holds `day`. */
export function weekStart(day: Day): Day {
  return addDays(day, -((weekday(day) + 6) % 7));
}

/** The business day `now` falls on. */
function localDay(now: Date, timezone: string): Day {
  return new Intl.DateTimeFormat('en-CA', { timeZone: timezone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(now);
}

/**
 * The latest full week (Monday to Sunday) that ends on or before the newest
 * judged day, or before today when nothing has been judged: on a Monday
 * morning that is the week that just ended; for a replayed history, its last
 * full week.
 */
export async function defaultWeek(rt: DigestRuntime, now: Date): Promise<Day> {
  const { rows } = await rt.state.query<{ day: string | null }>(`select to_char(max(day), 'YYYY-MM-DD') as day from ${quoteIdent(rt.stateSchema)}.judged_days`);
  const reference = rows[0]?.day ?? addDays(localDay(now, rt.timezone), -1);
  return weekday(reference) === 0 ? weekStart(reference) : addDays(weekStart(reference), -7);
}

function rate(entered: number, completed: number): Rate {
  return { entered, completed, rate: entered > 0 ? completed / entered : null };
}

/** The digest of every owner that owns a flow (owners without a flow get none). */
export async function loadDigests(rt: DigestRuntime, week: Day, owners?: string[]): Promise<Digest[]> {
  const main = rt.config.main;
  const byOwner = new Map<string, FlowDefinition[]>();
  for (const flow of rt.flows) byOwner.set(flow.owner, [...(byOwner.get(flow.owner) ?? []), flow]);
  const digests: Digest[] = [];
  for (const [owner, flows] of [...byOwner].sort(([a], [b]) => a.localeCompare(b))) {
    if (owners !== undefined && !owners.includes(owner)) continue;
    const loaded: DigestFlow[] = [];
    for (const flow of flows) loaded.push(await loadFlow(rt, flow, week));
    digests.push({
      owner,
      recipients: main.owners[owner]?.email ?? [],
      week,
      weekEnd: addDays(week, 6),
      flows: loaded,
      publicUrl: main.http.public_url,
      hideValues: main.delivery.hide_values,
    });
  }
  return digests;
}

async function loadFlow(rt: DigestRuntime, flow: FlowDefinition, week: Day): Promise<DigestFlow> {
  const s = quoteIdent(rt.stateSchema);
  const weekEnd = addDays(week, 6);
  const first = addDays(week, -7 * BASELINE_WEEKS);
  const title = rt.config.flows.find((f) => f.config.flow === flow.id)?.config.title ?? flow.id;
  const last = flow.steps.length - 1;

  const { rows: funnel } = await rt.state.query<{ platform: string; step: number; offset: number; reached: number }>({
    text: `select platform, step, floor((day - $1::date) / 7.0)::int as "offset", sum(reached)::float8 as reached
      from ${s}.funnel_days
      where flow = $3 and day between $2 and $4 and version = '*' and dimension = ''
      group by platform, step, 3`,
    values: [week, first, flow.id, weekEnd],
  });
  const reached = (platform: string, step: number, offsets: number[]) =>
    funnel.filter((r) => r.platform === platform && r.step === step && offsets.includes(r.offset)).reduce((sum, r) => sum + r.reached, 0);
  const baselineOffsets = Array.from({ length: BASELINE_WEEKS }, (_, i) => -(i + 1));
  const platforms = flow.platforms;
  const conversion = platforms.map((platform) => ({
    platform,
    week: rate(reached(platform, 0, [0]), reached(platform, last, [0])),
    baseline: rate(reached(platform, 0, baselineOffsets), reached(platform, last, baselineOffsets)),
  }));
  const weekly = [...baselineOffsets].reverse().concat([0]).flatMap((offset) =>
    platforms.map((platform) => ({ week: addDays(week, 7 * offset), platform, conversion: rate(reached(platform, 0, [offset]), reached(platform, last, [offset])).rate })),
  );
  const share = (platform: string, step: number, offsets: number[]) => rate(reached(platform, 0, offsets), reached(platform, step, offsets)).rate;
  const dropOff = flow.steps.map((step, index) => ({
    step: step.name,
    platforms: platforms.map((platform) => ({ platform, week: share(platform, index, [0]), baseline: share(platform, index, baselineOffsets) })),
  }));

  const incidents = (await listIncidents(rt.state, rt.stateSchema, { flows: [flow.id], from: week, to: weekEnd })).filter((i) => !i.muted);
  const sightings = await latestSightings(rt.state, rt.stateSchema, incidents.map((i) => i.id));
  const present = async (incident: Incident): Promise<DigestIncident> => {
    const sighting: Sighting | undefined = sightings.get(incident.id);
    const values = await loadValuePolicy(rt.state, rt.stateSchema, rt.config.main.delivery.hide_values, paramKeysOf(sighting?.symptoms ?? []), incident.since, incident.lastSeenDay);
    const presentation = presentIncident(incident, sighting, values);
    const primary = rankSymptoms(sighting?.symptoms ?? [])[0];
    return {
      incident,
      presentation,
      url: incidentUrl(rt.config.main.http.public_url, incident.id),
      excerpt: primary?.excerpt ?? [],
      percent: primary !== undefined && isFractionMetric(primary.metric),
    };
  };
  const inWeek = (day: Day | null) => day !== null && day >= week && day <= weekEnd;
  const opened = await Promise.all(incidents.filter((i) => inWeek(i.openedDay)).map(present));
  const resolved = await Promise.all(incidents.filter((i) => inWeek(i.resolvedDay)).map(present));

  return {
    id: flow.id,
    title,
    platforms,
    steps: flow.steps.map((step) => step.name),
    conversion,
    weekly,
    dropOff,
    opened,
    resolved,
    schemaChanges: await loadSchemaChanges(rt, flow.id, week, weekEnd),
    noise: await loadNoise(rt, flow.id, week, weekEnd),
  };
}

/** Unmuted findings of the `schema` check in the week, one line per series and kind, with the first day seen. */
async function loadSchemaChanges(rt: DigestRuntime, flow: string, week: Day, weekEnd: Day): Promise<SchemaChange[]> {
  const { rows } = await rt.state.query<{ day: Day; seriesKey: string; kind: string; platform: string | null; version: string | null; subject: Finding['subject']; message: string }>({
    text: `select to_char(day, 'YYYY-MM-DD') as day, series_key as "seriesKey", kind, platform, version, subject, message
      from ${quoteIdent(rt.stateSchema)}.findings
      where flow = $1 and day between $2 and $3 and check_id = 'schema' and muted_reason is null
      order by day, series_key collate "C", kind`,
    values: [flow, week, weekEnd],
  });
  const values = await loadValuePolicy(rt.state, rt.stateSchema, rt.config.main.delivery.hide_values, paramKeysOf(rows), week, weekEnd);
  const changes = new Map<string, SchemaChange>();
  for (const row of rows) {
    const key = `${row.seriesKey}\u0000${row.kind}`;
    const shown = valuesShown(values, [row]);
    const first = changes.get(key);
    changes.set(key, {
      firstDay: first?.firstDay ?? row.day,
      platform: row.platform,
      version: row.version,
      subject: row.subject.name,
      kind: row.kind,
      message: shown ? row.message : null,
    });
  }
  return [...changes.values()];
}

async function loadNoise(rt: DigestRuntime, flow: string, week: Day, weekEnd: Day): Promise<NoiseRow[]> {
  const s = quoteIdent(rt.stateSchema);
  const { rows: findings } = await rt.state.query<{ check: string; raised: number; muted: number }>({
    text: `select check_id as "check", count(*) filter (where muted_reason is null)::int as raised, count(*) filter (where muted_reason is not null)::int as muted
      from ${s}.findings where flow = $1 and day between $2 and $3 group by check_id`,
    values: [flow, week, weekEnd],
  });
  const { rows: incidents } = await rt.state.query<{ check: string; incidents: number; oneDay: number }>({
    text: `select c.check, count(distinct i.id)::int as incidents,
        count(distinct i.id) filter (where i.status = 'resolved' and i.days_seen = 1)::int as "oneDay"
      from ${s}.incidents i
      cross join lateral (
        select distinct s->>'check' as check from ${s}.incident_days d, jsonb_array_elements(d.symptoms) s where d.incident_id = i.id) c
      where $1 = any(i.flows) and i.opened_day between $2 and $3
      group by c.check`,
    values: [flow, week, weekEnd],
  });
  const checks = [...new Set([...findings.map((r) => r.check), ...incidents.map((r) => r.check)])].sort();
  return checks.map((check) => {
    const f = findings.find((r) => r.check === check);
    const i = incidents.find((r) => r.check === check);
    return { check, raised: f?.raised ?? 0, muted: f?.muted ?? 0, incidents: i?.incidents ?? 0, oneDay: i?.oneDay ?? 0 };
  });
}
