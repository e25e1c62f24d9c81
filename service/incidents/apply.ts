/**
 * The incident lifecycle. Called inside the transaction that stores a judged
 * day's findings of every flow, it turns that day's incident drafts into
 * incidents (opened, ongoing, resolved) and decides what chat is told:
 * `delivery/announce.ts` renders and queues it in the same transaction, so a
 * finding, its incident and its message commit or roll back together. The day
 * is the unit, not the flow: a data delay holds back every flow at once and is
 * one incident and one message, listing the flows.
 *
 * Everything is derived from three tables, so a rerun of a day leaves exactly
 * what the first run left: `incident_days` (one sighting per incident and
 * judged day, naming the flows that saw it; a rerun replaces the day's
 * sightings), `incident_holds` (days that held an incident open without a
 * sighting: a series still outside its band, a calendar day; replaced the
 * same way) and `judged_days` (the verdicts the resolution counts). Messages
 * are unique per (incident, event, day), and an incident remembers what it
 * last announced, so a rerun cannot queue a message twice.
 */
import { createHash } from 'node:crypto';
import type pg from 'pg';
import { mergeDrafts } from '../../checks/causes/index.js';
import type { IncidentDraft } from '../../checks/causes/types.js';
import { SEVERITIES, SEVERITY_RANK } from '../../checks/severity.js';
import type { BandExceedance, Day } from '../../checks/types.js';
import type { MainConfig } from '../config/schema.js';
import { quoteIdent } from '../db/sql.js';
import { loadIncidents } from './store.js';
import type { Incident, IncidentEvent, IncidentPolicy } from './types.js';

export function incidentPolicy(main: MainConfig): IncidentPolicy {
  return {
    resolveAfterDays: main.incidents.resolve_after_days,
    repeatAfterSeconds: main.incidents.repeat_after,
    publicUrl: main.http.public_url,
    owners: main.owners,
    hideValues: main.delivery.hide_values,
    chatFormat: main.delivery.chat.format,
  };
}

/** `<flow>-<yyyymmdd>-<8 hex of the fingerprint>`: derived, so a rerun finds the same id; readable in a URL. */
export function incidentId(flow: string, fingerprint: string, openedDay: Day): string {
  return `${flow}-${openedDay.replaceAll('-', '')}-${createHash('sha256').update(fingerprint).digest('hex').slice(0, 8)}`;
}

export interface IncidentChanges {
  /** Incidents first seen on this day. */
  opened: string[];
  /** Incidents seen again on this day. */
  ongoing: string[];
  /** Incidents that resolved with this day. */
  resolved: string[];
  /** Messages to queue, in order (`delivery/announce.ts`); empty when `quiet`. */
  announce: Announcement[];
  /** Incidents whose resolution no longer holds (a rerun saw them again): their pending "resolved" message is taken back. */
  withdraw: string[];
}

/** One chat message decided: `incident` as it was before this announcement was recorded, so it still names the severity chat last heard. */
export interface Announcement {
  event: IncidentEvent;
  incident: Incident;
  day: Day;
}

/**
 * Applies the incident drafts of one judged day of `flows` (every flow judged
 * that day), inside the caller's transaction (after the day's verdicts are
 * stored in `judged_days`). `now` is the run's clock: it stamps rows and
 * measures the wait between messages (`incidents.repeat_after`). With
 * `quiet` (a backfill's days older than the catch-up window) incidents change
 * as usual but no message is queued: history is not news.
 * With `lateRows` (the day is judged again because late rows restated it),
 * incidents the day's first judgement opened that the complete data no longer
 * shows close as late data (see closeAsLateData).
 */
export async function applyIncidentDrafts(
  client: pg.ClientBase,
  schema: string,
  flows: readonly string[],
  day: Day,
  drafts: readonly IncidentDraft[],
  policy: IncidentPolicy,
  now: Date,
  options: { quiet?: boolean; lateRows?: boolean; holds?: DayHolds } = {},
): Promise<IncidentChanges> {
  for (const draft of drafts) {
    const stranger = draft.flows.find((flow) => !flows.includes(flow));
    if (stranger !== undefined || draft.day !== day) throw new Error(`incident draft ${draft.fingerprint} is for ${draft.flows.join(', ')} on ${draft.day}, not ${flows.join(', ')} on ${day}`);
  }
  const s = quoteIdent(schema);
  // Replicas judging the same day take turns, so two cannot open the same incident twice.
  await client.query({ text: 'select pg_advisory_xact_lock(hashtext($1))', values: [`plumbline.incidents.${schema}`] });
  const changes: IncidentChanges = { opened: [], ongoing: [], resolved: [], announce: [], withdraw: [] };

  const { rows: earlier } = await client.query<{ id: string }>({
    text: `delete from ${s}.incident_days where day = $1 and flows && $2::text[] returning incident_id as id`,
    values: [day, flows],
  });
  const { rows: heldBefore } = await client.query<{ id: string }>({
    text: `delete from ${s}.incident_holds where day = $1 and flows && $2::text[] returning incident_id as id`,
    values: [day, flows],
  });
  const touched = new Set([...earlier, ...heldBefore].map((row) => row.id));
  const seen = new Set<string>();
  for (const draft of await withoutToldRestatements(client, s, flows, mergeDrafts(drafts))) {
    // The episode of this fingerprint that covers the day: opened on or before it and not resolved before it.
    const { rows } = await client.query<{ id: string; openedDay: Day }>({
      text: `select id, to_char(opened_day, 'YYYY-MM-DD') as "openedDay" from ${s}.incidents where fingerprint = $1 and opened_day <= $2 and (resolved_day is null or resolved_day >= $2)
        order by opened_day desc limit 1 for update`,
      values: [draft.fingerprint, day],
    });
    const episode = rows[0] ?? (await recentOnSameSubject(client, s, draft, day));
    let id = episode?.id;
    if (id === undefined) {
      id = incidentId(draft.flows[0]!, draft.fingerprint, day);
      await client.query({
        text: `insert into ${s}.incidents (id, fingerprint, flow, owner, flows, owners, status, severity, muted, title, subject, platform, version, cause_label,
            since, opened_day, last_seen_day, days_seen, opened_at, updated_at)
          values ($1, $2, $3, $4, $5, $6, 'open', $7, $8, $9, $10, $11, $12, $13, $14, $15, $15, 1, $16, $16)`,
        values: [
          id,
          draft.fingerprint,
          draft.flows[0],
          draft.owners[0],
          draft.flows,
          draft.owners,
          draft.severity,
          draft.muted,
          draft.title,
          draft.subject,
          draft.platform,
          draft.version,
          draft.cause.label,
          draft.since,
          day,
          now,
        ],
      });
    }
    if (!seen.has(id)) ((episode?.openedDay ?? day) === day ? changes.opened : changes.ongoing).push(id);
    // Two drafts of the day that join one incident are one sighting: the first keeps its title and cause, symptoms add up.
    await client.query({
      text: `insert into ${s}.incident_days as d (incident_id, flows, day, since, severity, muted, title, cause, symptoms)
        values ($1, $2, $3, $4, $5, $6, $7, $8, $9)
        on conflict (incident_id, day) do update set
          flows = d.flows || array(select f from unnest(excluded.flows) as f where f <> all(d.flows)),
          since = least(d.since, excluded.since),
          severity = case when array_position($10::text[], excluded.severity) > array_position($10::text[], d.severity) then excluded.severity else d.severity end,
          muted = d.muted and excluded.muted,
          symptoms = d.symptoms || excluded.symptoms`,
      values: [id, draft.flows, day, draft.since, draft.severity, draft.muted, draft.title, JSON.stringify(draft.cause), JSON.stringify(draft.symptoms), SEVERITIES],
    });
    // A flow that sees the incident later joins the flows it holds back, its owner the owners.
    await client.query({
      text: `update ${s}.incidents set
          flows = flows || array(select f from unnest($2::text[]) with ordinality as u(f, n) where f <> all(flows) order by n),
          owners = owners || array(select o from unnest($3::text[]) with ordinality as u(o, n) where o <> all(owners) order by n)
        where id = $1 and not (flows @> $2::text[] and owners @> $3::text[])`,
      values: [id, draft.flows, draft.owners],
    });
    touched.add(id);
    seen.add(id);
  }
  for (const id of await recordHolds(client, s, flows, day, options.holds, [...seen])) touched.add(id);
  await refreshFromSightings(client, s, [...touched], now);
  const late = options.lateRows ? await closeAsLateData(client, s, day, [...touched].filter((id) => !seen.has(id)), now) : [];
  const resolved = [...(await loadIncidents(client, schema, late)), ...(await settle(client, schema, flows, day, [...touched], policy, now, changes.withdraw))];
  changes.resolved = resolved.map((incident) => incident.id);
  if (options.quiet) return changes;
  changes.announce.push(...announceResolved(resolved), ...(await announceSeen(client, schema, [...seen], day, policy, now)));
  return changes;
}

/** A freshness finding that late rows restated a past day: what the restated day's judgement again has to tell. */
const isRestatement = (finding: IncidentDraft['symptoms'][number]) => finding.check === 'freshness' && finding.kind === 'restated';

/**
 * Drops the drafts that only say late rows restated past days whose
 * incidents of the same flow the judgement again already closed as late data: those
 * incidents' one resolution message says it, so the arrival day opens no
 * incident of its own (its findings stay recorded). A restatement that
 * closed nothing is the only trace of the late rows and stays a note.
 */
async function withoutToldRestatements(client: pg.ClientBase, s: string, flows: readonly string[], drafts: IncidentDraft[]): Promise<IncidentDraft[]> {
  const days = [...new Set(drafts.flatMap((d) => d.symptoms.filter(isRestatement).map((f) => String(f.evidence?.restatedDay ?? ''))))].filter((d) => d !== '');
  if (days.length === 0) return drafts;
  // Per flow: another flow's closed incident told that flow's owner, not this one's.
  const { rows } = await client.query<{ day: Day; flow: string }>({
    text: `select distinct to_char(resolved_day, 'YYYY-MM-DD') as day, f as flow from ${s}.incidents, unnest(flows) as f
      where resolution = 'late_data' and f = any($1::text[]) and resolved_day = any($2::date[])`,
    values: [flows, days],
  });
  const told = new Set(rows.map((row) => `${row.day}|${row.flow}`));
  return drafts.filter((d) => !d.symptoms.every((f) => isRestatement(f) && told.has(`${String(f.evidence?.restatedDay)}|${f.flow}`)));
}

/** Days within which a finding on the subject of a recent incident joins it instead of opening another (common practice: "a few days"). */
export const JOIN_DAYS = 3;

/**
 * Hysteresis: an incident of the draft's flow about the same subject, on the
 * same platform and version (or both on all), seen or held open (incident_holds)
 * within JOIN_DAYS days (resolved since by clean days, or not): the draft joins
 * it, whatever cause it was given. The subject is the one the fingerprint
 * names (a release's version, a platform's shift, a change of the whole flow)
 * or the series' subject; and a platform's shift takes in what that platform
 * alone shows with no version to blame (its people lost on one step look like
 * behaviour or a segment there), as an incident confined to the platform takes
 * in the platform cause that comes to explain it. The scope must match exactly:
 * an all-platform move is not folded into one platform's incident, nor a new
 * release into an older one. A shift that hovers around a threshold, or whose
 * label wavers between two tests, stays one incident. Data delays and calendar
 * notes have their own fingerprints across subjects and never join.
 */
async function recentOnSameSubject(client: pg.ClientBase, s: string, draft: IncidentDraft, day: Day): Promise<{ id: string; openedDay: Day } | undefined> {
  if (draft.cause.label === 'data_delay' || draft.cause.label === 'calendar') return undefined;
  const { rows } = await client.query<{ id: string; openedDay: Day }>({
    text: `select id, to_char(opened_day, 'YYYY-MM-DD') as "openedDay" from ${s}.incidents i
      where flow = $1 and opened_day <= $3
        and greatest(last_seen_day, (select max(h.day) from ${s}.incident_holds h where h.incident_id = i.id and h.day < $3)) >= $3::date - $4::int
        and platform is not distinct from $5 and version is not distinct from $6
        and cause_label not in ('data_delay', 'calendar') and (resolution is null or resolution = 'clean_days')
        and (subject = $2 or fingerprint = $7 or ($5::text is not null and $6::text is null and 'platform' in (cause_label, $8)))
      order by last_seen_day desc, opened_day, id limit 1 for update`,
    values: [draft.flows[0], draft.subject, day, JOIN_DAYS, draft.platform, draft.version, draft.fingerprint, draft.cause.label],
  });
  return rows[0];
}

/** What holds incidents open on a judged day without a sighting (hysteresis). */
export interface DayHolds {
  /** Series of open incidents still outside their expected band, under the finding thresholds (`CheckModule.outside`). */
  outside: BandExceedance[];
  /** The flows whose calendar declares the day: it is neither a clean day nor a break in their incidents' runs. */
  calendar: string[];
}

/**
 * Records the day as held (no clean day) for every incident it was not seen
 * on that is unresolved on it: those of a flow whose calendar declares the day,
 * and those with a symptom on a series still outside its band, the same way.
 * Returns their ids.
 */
async function recordHolds(client: pg.ClientBase, s: string, flows: readonly string[], day: Day, holds: DayHolds | undefined, seen: string[]): Promise<string[]> {
  if (!holds || (holds.outside.length === 0 && holds.calendar.length === 0)) return [];
  const outside = holds.outside.map((e) => `${e.flow}|${e.seriesKey}|${e.direction}`);
  const { rows } = await client.query<{ id: string }>({
    text: `insert into ${s}.incident_holds (incident_id, day, flows, reason)
      select i.id, $1, $2, case when i.flows && $4::text[] then 'calendar' else 'band' end
      from ${s}.incidents i
      where i.flows && $2::text[] and i.opened_day < $1 and not (i.id = any($3))
        and (i.status <> 'resolved' or i.resolved_day >= $1) and i.resolution is distinct from 'late_data' and i.resolution is distinct from 'withdrawn'
        and (i.flows && $4::text[] or exists (
          select 1 from ${s}.incident_days d cross join lateral jsonb_array_elements(d.symptoms) as f
          where d.incident_id = i.id and d.day < $1 and (f->>'flow') || '|' || (f->>'seriesKey') || '|' || (f->>'direction') = any($5::text[])))
      on conflict (incident_id, day) do nothing
      returning incident_id as id`,
    values: [day, flows, seen, holds.calendar, outside],
  });
  return rows.map((row) => row.id);
}

/** Recomputes an incident's days, latest details and highest severity from its sightings. */
async function refreshFromSightings(client: pg.ClientBase, s: string, ids: string[], now: Date): Promise<void> {
  if (ids.length === 0) return;
  await client.query({
    text: `with t as (select unnest($1::text[]) as id),
      agg as (
        select d.incident_id, count(*)::int as n, max(d.day) as last_day, min(d.since) as since,
          max(array_position($3::text[], d.severity)) as rank
        from ${s}.incident_days d join t on t.id = d.incident_id group by d.incident_id),
      latest as (
        select distinct on (d.incident_id) d.incident_id, d.title, d.muted
        from ${s}.incident_days d join t on t.id = d.incident_id order by d.incident_id, d.day desc),
      -- The label does not flip without new evidence: the strongest cause seen wins, the earliest on a tie.
      strongest as (
        select distinct on (d.incident_id) d.incident_id, d.cause->>'label' as label
        from ${s}.incident_days d join t on t.id = d.incident_id order by d.incident_id, (d.cause->>'confidence')::float8 desc, d.day)
      update ${s}.incidents i set
        days_seen = coalesce(agg.n, 0),
        last_seen_day = coalesce(agg.last_day, i.last_seen_day),
        since = coalesce(agg.since, i.since),
        severity = coalesce(($3::text[])[agg.rank], i.severity),
        title = coalesce(latest.title, i.title),
        muted = coalesce(latest.muted, i.muted),
        cause_label = case when i.resolution = 'late_data' then i.cause_label else coalesce(strongest.label, i.cause_label) end,
        updated_at = $2
      from t left join agg on agg.incident_id = t.id left join latest on latest.incident_id = t.id left join strongest on strongest.incident_id = t.id
      where i.id = t.id`,
    values: [ids, now, SEVERITIES],
  });
}

/**
 * Late rows restated `day` and it was judged again: of the incidents its
 * first judgement opened, those the complete data no longer shows (`gone`,
 * not seen on the day any more) were missing data, not a change. They close
 * as late data, labelled data delay, and keep their other days' sightings;
 * an announced one gets one resolution message saying so. Returns their ids.
 */
async function closeAsLateData(client: pg.ClientBase, s: string, day: Day, gone: string[], now: Date): Promise<string[]> {
  if (gone.length === 0) return [];
  const { rows } = await client.query<{ id: string }>({
    text: `update ${s}.incidents set status = 'resolved', resolution = 'late_data', resolved_day = $2, resolved_at = $3, cause_label = 'data_delay', updated_at = $3
      where id = any($1) and opened_day = $2 and resolution is distinct from 'late_data' returning id`,
    values: [gone, day, now],
  });
  return rows.map((row) => row.id);
}

interface SettleRow {
  id: string;
  status: string;
  resolvedDay: Day | null;
  resolution: string | null;
  daysSeen: number;
  cleanDay: Day | null;
}

/**
 * Sets each affected incident's state from its sightings and its flows'
 * verdicts: resolved on the `resolve_after_days`-th judged day after it was
 * last seen or held open (incident_holds) (a day none of its flows held back:
 * `not_ready` days do not count as clean), withdrawn when a rerun left it
 * without sightings, open or ongoing otherwise. Returns the incidents that
 * became resolved; adds to `withdraw` those whose resolution no longer holds.
 */
async function settle(client: pg.ClientBase, schema: string, flows: readonly string[], day: Day, touched: string[], policy: IncidentPolicy, now: Date, withdraw: string[]): Promise<Incident[]> {
  const s = quoteIdent(schema);
  const { rows } = await client.query<SettleRow>({
    text: `select i.id, i.status, to_char(i.resolved_day, 'YYYY-MM-DD') as "resolvedDay", i.resolution, i.days_seen as "daysSeen",
        (select to_char(j.day, 'YYYY-MM-DD') from ${s}.judged_days j
          where j.flow = any(i.flows) and j.day > greatest(i.last_seen_day, (select max(h.day) from ${s}.incident_holds h where h.incident_id = i.id))
          group by j.day having bool_and(j.verdict = 'judged') order by j.day offset $3 limit 1) as "cleanDay"
      from ${s}.incidents i
      where i.flows && $1::text[] and (i.status <> 'resolved' or i.resolved_day >= $2 or i.id = any($4)) and i.resolution is distinct from 'late_data'
      order by i.id for update of i`,
    values: [flows, day, policy.resolveAfterDays - 1, touched],
  });
  const newlyResolved: string[] = [];
  for (const row of rows) {
    let target: { status: string; resolvedDay: Day | null; resolution: string | null };
    if (row.daysSeen === 0) target = { status: 'resolved', resolvedDay: row.resolution === 'withdrawn' ? row.resolvedDay : day, resolution: 'withdrawn' };
    else if (row.cleanDay !== null) target = { status: 'resolved', resolvedDay: row.cleanDay, resolution: 'clean_days' };
    else target = { status: row.daysSeen >= 2 ? 'ongoing' : 'open', resolvedDay: null, resolution: null };
    if (target.status === row.status && target.resolvedDay === row.resolvedDay && target.resolution === row.resolution) continue;
    // A resolution that no longer holds (a rerun saw it again) takes back its message if nobody has tried to send it yet.
    if (row.resolvedDay !== null && target.resolvedDay !== row.resolvedDay) withdraw.push(row.id);
    await client.query({
      text: `update ${s}.incidents set status = $2, resolved_day = $3, resolution = $4, resolved_at = case when $3::date is null then null else $5::timestamptz end, updated_at = $5
        where id = $1`,
      values: [row.id, target.status, target.resolvedDay, target.resolution, now],
    });
    if (target.resolvedDay !== null) newlyResolved.push(row.id);
  }
  return newlyResolved.length === 0 ? [] : await loadIncidents(client, schema, newlyResolved);
}

/** A resolution is announced only for incidents whose opening was: muted ones and notes come and go silently. */
function announceResolved(incidents: Incident[]): Announcement[] {
  return incidents.filter((incident) => incident.notifiedSeverity !== null).map((incident) => ({ event: 'resolved', incident, day: incident.resolvedDay! }));
}

/**
 * Announces the unresolved, unmuted incidents above `note` seen on the day: "opened" the
 * first time, "severity raised" when the severity is above what was last
 * announced, "still held back" when a data delay has been seen on twice as
 * many days as when it was last announced (2, 4, 8, ... days: a silence is
 * told as it grows, without a message every day); a repeat waits until
 * `incidents.repeat_after` has passed since the last announcement (a rise
 * sooner than that is announced once the wait is over, if it holds).
 */
async function announceSeen(client: pg.ClientBase, schema: string, ids: string[], day: Day, policy: IncidentPolicy, now: Date): Promise<Announcement[]> {
  if (ids.length === 0) return [];
  const s = quoteIdent(schema);
  const { rows } = await client.query<{ id: string; days: number | null }>({
    text: `select id, notified_days_seen as days from ${s}.incidents where id = any($1)`,
    values: [ids],
  });
  const announcedDays = new Map(rows.map((row) => [row.id, row.days]));
  const announce: Announcement[] = [];
  for (const incident of await loadIncidents(client, schema, ids)) {
    // A note is recorded and shown in the digest, never sent to chat: an incident speaks once a sighting reaches warn.
    if (incident.muted || incident.status === 'resolved' || incident.severity === 'note') continue;
    const waited = incident.lastNotifiedAt === null || now.getTime() - Date.parse(incident.lastNotifiedAt) >= policy.repeatAfterSeconds * 1000;
    let event: IncidentEvent;
    if (incident.notifiedSeverity === null) event = 'opened';
    else if (SEVERITY_RANK[incident.severity] > SEVERITY_RANK[incident.notifiedSeverity] && waited) event = 'severity_raised';
    else if (incident.causeLabel === 'data_delay' && incident.daysSeen >= 2 * (announcedDays.get(incident.id) ?? incident.daysSeen) && waited) event = 'still_held_back';
    else continue;
    announce.push({ event, incident, day });
    await markAnnounced(client, schema, incident.id, now);
  }
  return announce;
}

/** Records that an incident's current severity and length were announced at `now`. */
export async function markAnnounced(client: pg.ClientBase, schema: string, id: string, now: Date): Promise<void> {
  await client.query({
    text: `update ${quoteIdent(schema)}.incidents set notified_severity = severity, notified_days_seen = days_seen, last_notified_at = $2 where id = $1`,
    values: [id, now],
  });
}
