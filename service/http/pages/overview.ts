/**
 * `/`: the status page of a plumbline setup. Each flow with its newest
 * verdict, the incidents still open, those resolved lately, the newest runs,
 * and the chat messages waiting or parked (the delivery status page).
 */
import { formatCount } from '../../../checks/messages.js';
import { SEVERITY_RANK } from '../../../checks/severity.js';
import { addDays } from '../../../checks/time.js';
import type { Day } from '../../../checks/types.js';
import { scrubDatabaseText } from '../../db/errors.js';
import { OUTBOX_STATES, STUCK_STATES, listOutbox, outboxCounts, type OutboxMessage, type OutboxState } from '../../delivery/outbox.js';
import { causeWords, presentIncident, whereText } from '../../present/present.js';
import { loadValuePolicy, paramKeysOf } from '../../present/privacy.js';
import { escapeHtml } from '../../present/text.js';
import { latestSightings, listIncidents } from '../../incidents/store.js';
import type { Incident } from '../../incidents/types.js';
import {
  clientText,
  dataTable,
  dayText,
  formatInstant,
  formatSeconds,
  incidentLink,
  none,
  pageDocument,
  SENTENCE_MAX,
  severityText,
} from './layout.js';
import { dayStatusNotesQuery, latestVerdictsQuery, recentRunsQuery, type DayStatusNote, type LatestVerdict, type RunRow } from './queries.js';
import type { PagesContext } from './context.js';

/** Resolved incidents stay on the overview this many days after the newest judged day. */
export const RECENT_DAYS = 14;
const RUNS_SHOWN = 12;
const FAILURES_SHOWN = 10;
const OUTBOX_SHOWN = 50;
const RESOLVED_SHOWN = 20;
/** Rolled-up days whose rows plumbline could not use, or whose row limits were reached, are listed this far back. */
const STATUS_DAYS = 7;

interface ListedIncident {
  incident: Incident;
  /** What the page may say about it (parameter values hidden per privacy.ts). */
  headline: string;
}

export interface Overview {
  flows: Array<{ id: string; title: string; owner: string; platforms: string[]; verdict: LatestVerdict | undefined; open: number }>;
  open: ListedIncident[];
  resolved: ListedIncident[];
  /** The newest judged day of any flow; the recent window ends there. */
  newestDay: Day | null;
  runs: RunRow[];
  /** The newest failed or abandoned runs, however old: a replay of many days must not push them off the page. */
  failures: RunRow[];
  outbox: { counts: Record<OutboxState, number>; parked: OutboxMessage[]; waiting: OutboxMessage[] };
  /** Platforms of the newest rolled-up days with bad rows or a row limit reached. */
  dayStatus: DayStatusNote[];
  timezone: string;
  demo: boolean;
}

export async function loadOverview(ctx: PagesContext): Promise<Overview> {
  const { state: db, stateSchema: schema } = ctx.rt;
  const { rows: verdicts } = await db.query<LatestVerdict>(latestVerdictsQuery(schema));
  const newestDay = verdicts.reduce<Day | null>((newest, v) => (newest === null || v.day > newest ? v.day : newest), null);
  const flowIds = ctx.rt.flows.map((flow) => flow.id);
  // Incidents are only opened by a judgement, so none opened after the newest judged day.
  const incidents = newestDay === null ? [] : await listIncidents(db, schema, { flows: flowIds, from: addDays(newestDay, -(RECENT_DAYS - 1)), to: newestDay });
  const sightings = await latestSightings(db, schema, incidents.map((i) => i.id));
  const hideValues = ctx.rt.config.main.delivery.hide_values;
  const listed = await Promise.all(
    incidents.map(async (incident): Promise<ListedIncident> => {
      const sighting = sightings.get(incident.id);
      const values = await loadValuePolicy(db, schema, hideValues, paramKeysOf(sighting?.symptoms ?? []), incident.since, incident.lastSeenDay);
      return { incident, headline: presentIncident(incident, sighting, values).headline };
    }),
  );
  const open = listed
    .filter(({ incident }) => incident.status !== 'resolved')
    .sort((a, b) => SEVERITY_RANK[b.incident.severity] - SEVERITY_RANK[a.incident.severity] || b.incident.lastSeenDay.localeCompare(a.incident.lastSeenDay) || a.incident.id.localeCompare(b.incident.id));
  const resolved = listed
    .filter(({ incident }) => incident.status === 'resolved')
    .sort((a, b) => (b.incident.resolvedDay ?? '').localeCompare(a.incident.resolvedDay ?? '') || a.incident.id.localeCompare(b.incident.id))
    .slice(0, RESOLVED_SHOWN);
  const { rows: runs } = await db.query<RunRow>(recentRunsQuery(schema, RUNS_SHOWN));
  const { rows: failures } = await db.query<RunRow>(recentRunsQuery(schema, FAILURES_SHOWN, true));
  const [counts, parked, waiting] = await Promise.all([
    outboxCounts(db, schema),
    listOutbox(db, schema, STUCK_STATES, OUTBOX_SHOWN),
    listOutbox(db, schema, ['pending', 'sending'], OUTBOX_SHOWN),
  ]);
  const { rows: dayStatus } = await db.query<DayStatusNote>(dayStatusNotesQuery(schema, STATUS_DAYS));
  const titles = new Map(ctx.rt.config.flows.map(({ config }) => [config.flow, config.title]));
  return {
    flows: ctx.rt.flows.map((flow) => ({
      id: flow.id,
      title: titles.get(flow.id) ?? flow.id,
      owner: flow.owner,
      platforms: flow.platforms,
      verdict: verdicts.find((v) => v.flow === flow.id),
      open: open.filter(({ incident }) => incident.flows.includes(flow.id)).length,
    })),
    open,
    resolved,
    newestDay,
    runs,
    failures,
    outbox: { counts, parked, waiting },
    dayStatus,
    timezone: ctx.rt.timezone,
    demo: ctx.status.demo,
  };
}

const ROOT = './';

function flowsSection(o: Overview): string {
  const rows = o.flows.map((flow) => ({
    cells: [
      clientText(flow.id),
      clientText(flow.title),
      clientText(flow.owner),
      escapeHtml(flow.platforms.join(', ')),
      flow.verdict ? dayText(flow.verdict.day) : '<span class="muted">never judged</span>',
      flow.verdict === undefined
        ? '<span class="muted">-</span>'
        : flow.verdict.verdict === 'judged'
          ? 'judged'
          : `not ready${flow.verdict.reason ? `: ${clientText(flow.verdict.reason, SENTENCE_MAX)}` : ''}`,
      String(flow.open),
    ],
  }));
  return `<h2 id="flows">Flows</h2>
${dataTable({
  caption: `${o.flows.length} flow${o.flows.length === 1 ? '' : 's'} watched, with the newest judged day of each.`,
  columns: [{ label: 'flow' }, { label: 'title' }, { label: 'owner' }, { label: 'platforms' }, { label: 'last judged day' }, { label: 'verdict' }, { label: 'open incidents', numeric: true }],
  rows,
})}`;
}

function openSection(o: Overview): string {
  const header = `<h2 id="open">Open incidents (${o.open.length})</h2>`;
  if (o.open.length === 0) return `${header}${none('No open incidents.')}`;
  return `${header}
${dataTable({
  caption: 'Unresolved incidents, most severe first. Muted incidents are recorded but never announced in chat.',
  columns: [{ label: 'incident' }, { label: 'severity' }, { label: 'flow' }, { label: 'where' }, { label: 'since' }, { label: 'days seen', numeric: true }, { label: 'last seen' }, { label: 'likely cause' }, { label: 'status' }],
  rows: o.open.map(({ incident, headline }) => ({
    cells: [
      incidentLink(ROOT, incident.id, headline),
      severityText(incident.severity),
      clientText(incident.flows.join(', ')),
      clientText(whereText(incident.platform, incident.version)),
      dayText(incident.since),
      String(incident.daysSeen),
      dayText(incident.lastSeenDay),
      clientText(causeWords(incident.causeLabel)),
      `${escapeHtml(incident.status)}${incident.muted ? ' <span class="muted">(muted)</span>' : ''}`,
    ],
  })),
})}`;
}

function resolvedSection(o: Overview): string {
  const window = o.newestDay === null ? '' : ` since ${addDays(o.newestDay, -(RECENT_DAYS - 1))}`;
  const header = `<h2 id="resolved">Recently resolved (${o.resolved.length})</h2>`;
  if (o.resolved.length === 0) return `${header}${none(`No incident resolved${window}.`)}`;
  return `${header}
${dataTable({
  caption: `Incidents resolved${window}, newest first. "clean days": not seen again for the configured number of judged days; "withdrawn": a rerun of its days no longer showed it.`,
  columns: [{ label: 'incident' }, { label: 'severity' }, { label: 'flow' }, { label: 'since' }, { label: 'resolved on' }, { label: 'how' }, { label: 'likely cause' }],
  rows: o.resolved.map(({ incident, headline }) => ({
    cells: [
      incidentLink(ROOT, incident.id, headline),
      severityText(incident.severity),
      clientText(incident.flows.join(', ')),
      dayText(incident.since),
      dayText(incident.resolvedDay),
      escapeHtml(incident.resolution === 'late_data' ? 'late data' : incident.resolution === 'withdrawn' ? 'withdrawn' : 'clean days'),
      clientText(causeWords(incident.causeLabel)),
    ],
  })),
})}`;
}

const LIMIT_WORDS: Record<string, string> = { event_names: 'event names', versions: 'versions', dimension_values: 'values of a dimension', param_keys: 'parameter keys of an event' };

function dayStatusSection(o: Overview): string {
  const header = `<h2 id="day-status">Rows not used as sent</h2>`;
  if (o.dayStatus.length === 0) return `${header}${none(`Every row of the last ${STATUS_DAYS} rolled-up days was used as sent, within the row limits.`)}`;
  const count = (n: number) => escapeHtml(formatCount(n));
  return `${header}
${dataTable({
  caption: `Rows of the last ${STATUS_DAYS} rolled-up days that plumbline set aside (no event name) or repaired (a reserved version, text cut to length, unreadable parameters), and the row limits (warehouse.limits) reached: the values with the fewest events were counted, not rolled up.`,
  columns: [{ label: 'day' }, { label: 'platform' }, { label: 'events', numeric: true }, { label: 'no event name', numeric: true }, { label: 'reserved version', numeric: true }, { label: 'long text', numeric: true }, { label: 'unreadable parameters', numeric: true }, { label: 'row limits reached' }],
  rows: o.dayStatus.map((row) => ({
    cells: [
      dayText(row.day),
      clientText(row.platform),
      count(row.events),
      ...['no_event_name', 'reserved_version', 'long_text', 'unreadable_params'].map((reason) => count(row.badRows[reason] ?? 0)),
      Object.keys(row.overLimits).length === 0
        ? '<span class="muted">-</span>'
        : escapeHtml(Object.entries(row.overLimits).map(([limit, r]) => `${LIMIT_WORDS[limit] ?? limit}: ${formatCount(r.seen)} seen, ${formatCount(r.kept)} kept`).join('; ')),
    ],
  })),
})}`;
}

function runsTable(runs: RunRow[], caption: string, timezone: string): string {
  return dataTable({
    caption,
    columns: [{ label: 'run', numeric: true }, { label: 'kind' }, { label: 'day' }, { label: 'flow' }, { label: 'status' }, { label: 'started' }, { label: 'duration', numeric: true }, { label: 'error' }],
    rows: runs.map((run) => ({
      cells: [
        String(run.id),
        escapeHtml(run.kind),
        dayText(run.day),
        clientText(run.flow),
        escapeHtml(run.status),
        escapeHtml(formatInstant(run.startedAt, timezone)),
        run.seconds === null ? '<span class="muted">running</span>' : escapeHtml(formatSeconds(run.seconds)),
        clientText(run.error === null ? null : scrubDatabaseText(run.error), SENTENCE_MAX),
      ],
    })),
  });
}

function runsSection(o: Overview): string {
  const header = `<h2 id="runs">Last runs</h2>`;
  if (o.runs.length === 0) return `${header}${none('Nothing has run yet.')}`;
  const shown = new Set(o.runs.map((run) => run.id));
  const older = o.failures.filter((run) => !shown.has(run.id));
  return [
    header,
    runsTable(o.runs, `The ${o.runs.length} newest units of work: rollups (one business day, all flows) and judgements (one business day, all flows). Times in ${o.timezone}.`, o.timezone),
    `<h3 id="failures">Failed runs</h3>`,
    o.failures.length === 0
      ? none('No run has failed.')
      : older.length === 0
        ? none('The only failed runs are in the table above.')
        : runsTable(older, `The newest failed or abandoned runs not in the table above.`, o.timezone),
  ].join('\n');
}

/** `when` says, as text, the moment that matters for the list (parked at, next attempt). */
function messageRows(messages: OutboxMessage[], when: (m: OutboxMessage) => string) {
  return messages.map((m) => ({
    cells: [
      String(m.id),
      m.incidentId === null ? escapeHtml('(backfill summary)') : incidentLink(ROOT, m.incidentId, m.incidentId),
      escapeHtml(m.event),
      dayText(m.day),
      clientText(m.summary, SENTENCE_MAX),
      String(m.attempts),
      escapeHtml(when(m)),
      clientText(m.lastError, SENTENCE_MAX),
    ],
  }));
}

/** A message never tried is due at once; one being sent is retried when its lease ends (its sender died). */
function nextAttempt(m: OutboxMessage, timezone: string): string {
  if (m.state === 'sending') return m.leaseUntil === null ? 'being sent' : `being sent; again after ${formatInstant(m.leaseUntil, timezone)}`;
  return m.attempts === 0 ? 'due now (never tried)' : formatInstant(m.nextAttemptAt, timezone);
}

function outboxSection(o: Overview): string {
  const { counts, parked, waiting } = o.outbox;
  const columns = (time: string) => [
    { label: 'message', numeric: true },
    { label: 'incident' },
    { label: 'event' },
    { label: 'day' },
    { label: 'summary' },
    { label: 'attempts', numeric: true },
    { label: time },
    { label: 'last error' },
  ];
  const parts = [
    `<h2 id="outbox">Chat messages</h2>`,
    `<p>Parked and unconfirmed messages wait for a person: fix the cause (the last error says what went wrong), then queue each again with <code>plumbline outbox --retry ID</code>. An unconfirmed message may already have been shown: look in the channel first.</p>`,
    dataTable({
      caption: 'Messages in the outbox by state.',
      columns: [{ label: 'state' }, { label: 'messages', numeric: true }],
      rows: OUTBOX_STATES.map((state) => ({ cells: [escapeHtml(state), escapeHtml(formatCount(counts[state]))] })),
    }),
    `<h3 id="parked">Parked or unconfirmed (${counts.parked + counts.unconfirmed})</h3>`,
    parked.length === 0
      ? none('No parked or unconfirmed messages.')
      : dataTable({
          caption: `Messages that failed too often or were refused for good${counts.parked > parked.length ? ` (the oldest ${parked.length} shown)` : ''}.`,
          columns: columns('parked at'),
          rows: messageRows(parked, (m) => formatInstant(m.parkedAt ?? m.createdAt, o.timezone)),
        }),
    `<h3 id="waiting">Waiting to be sent (${counts.pending + counts.sending})</h3>`,
    waiting.length === 0
      ? none('No messages waiting.')
      : dataTable({
          caption: `Pending and in-flight messages, oldest first${counts.pending + counts.sending > waiting.length ? ` (the oldest ${waiting.length} shown)` : ''}.`,
          columns: columns('next attempt'),
          rows: messageRows(waiting, (m) => nextAttempt(m, o.timezone)),
        }),
  ];
  return parts.join('\n');
}

export function renderOverview(o: Overview): string {
  const html = [
    `<h1>Overview</h1>`,
    `<p>${escapeHtml(o.newestDay === null ? 'No day has been judged yet.' : `Newest judged day: ${o.newestDay}.`)} ${escapeHtml(`${o.open.length} open incident${o.open.length === 1 ? '' : 's'}, ${o.outbox.counts.parked} parked message${o.outbox.counts.parked === 1 ? '' : 's'}.`)}</p>`,
    flowsSection(o),
    openSection(o),
    resolvedSection(o),
    dayStatusSection(o),
    runsSection(o),
    outboxSection(o),
  ].join('\n');
  return pageDocument({ title: 'Overview', html, root: ROOT, demo: o.demo });
}
