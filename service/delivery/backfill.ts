/**
 * A backfill speaks once. Its days older than the catch-up window are judged
 * quietly (incidents recorded, no message queued: history is not news); then
 * this queues one summary of the range, and an "opened" message for each
 * incident still open that chat has not heard of. The summary is queued
 * first, and the sender holds every later message until it has gone, so the
 * channel reads: the summary, then what is open.
 */
import type pg from 'pg';
import { SEVERITY_RANK } from '../../checks/severity.js';
import { incidentUrl, type Incident, type IncidentPolicy } from '../incidents/types.js';
import { listIncidents } from '../incidents/store.js';
import { markAnnounced } from '../incidents/apply.js';
import { queueIncidentMessage } from './announce.js';
import { CHAT_FORMATS } from './chat.js';
import { enqueueBackfillSummary } from './outbox.js';
import { cleanText } from '../present/text.js';

export interface BackfillAnnouncement {
  /** Incidents above note the range recorded, muted ones left out. */
  recorded: number;
  /** Ids of those still open. */
  open: string[];
  /** Messages queued: the summary and one per open incident not announced before (0 when this range was summarised already). */
  queued: number;
}

/** Queues the summary of the backfill of `flows` over [from, to], inside the caller's transaction. */
export async function announceBackfill(
  client: pg.ClientBase,
  schema: string,
  flows: string[],
  range: { from: string; to: string },
  policy: IncidentPolicy,
  now: Date,
): Promise<BackfillAnnouncement> {
  const speaking = (incident: Incident) => !incident.muted && incident.severity !== 'note';
  const recorded = (await listIncidents(client, schema, { flows, ...range })).filter(speaking);
  const open = recorded
    .filter((incident) => incident.status !== 'resolved')
    .sort((a, b) => SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] || b.lastSeenDay.localeCompare(a.lastSeenDay) || a.id.localeCompare(b.id));
  const payload = CHAT_FORMATS[policy.chatFormat].renderBackfill({
    ...range,
    flows,
    recorded: recorded.length,
    open: open.map((incident) => ({ incident, url: incidentUrl(policy.publicUrl, incident.id) })),
    overviewUrl: `${policy.publicUrl.replace(/\/+$/, '')}/`,
  });
  const summary = cleanText(`backfill ${range.from}..${range.to}: ${recorded.length} incidents, ${open.length} still open`, 300);
  const result: BackfillAnnouncement = { recorded: recorded.length, open: open.map((incident) => incident.id), queued: 0 };
  if (!(await enqueueBackfillSummary(client, schema, { ...range, payload, summary }, now))) return result;
  result.queued++;
  for (const incident of open) {
    if (incident.notifiedSeverity !== null) continue;
    if (await queueIncidentMessage(client, schema, 'opened', incident, incident.lastSeenDay, policy, now)) result.queued++;
    await markAnnounced(client, schema, incident.id, now);
  }
  return result;
}
