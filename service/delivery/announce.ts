/**
 * Chat messages for what the incident lifecycle decided
 * (`incidents/apply.ts`): renders each announcement and queues it in the
 * outbox, and takes back the pending resolutions a rerun no longer holds,
 * inside the caller's transaction, so a finding, its incident and its message
 * commit or roll back together.
 */
import type pg from 'pg';
import type { Day } from '../../checks/types.js';
import type { IncidentChanges } from '../incidents/apply.js';
import { latestSightings } from '../incidents/store.js';
import { incidentUrl, type Incident, type IncidentEvent, type IncidentPolicy } from '../incidents/types.js';
import { presentIncident } from '../present/present.js';
import { loadValuePolicy, paramKeysOf } from '../present/privacy.js';
import { CHAT_FORMATS, summaryLine } from './chat.js';
import { enqueueChat, withdrawPending } from './outbox.js';

/** Withdraws, then queues, in the order decided; returns the number of messages queued (a rerun's repeats are not). */
export async function announceChanges(client: pg.ClientBase, schema: string, changes: Pick<IncidentChanges, 'announce' | 'withdraw'>, policy: IncidentPolicy, now: Date): Promise<number> {
  for (const id of changes.withdraw) await withdrawPending(client, schema, id, 'resolved');
  let queued = 0;
  for (const { event, incident, day } of changes.announce) if (await queueIncidentMessage(client, schema, event, incident, day, policy, now)) queued++;
  return queued;
}

export async function queueIncidentMessage(client: pg.ClientBase, schema: string, event: IncidentEvent, incident: Incident, day: Day, policy: IncidentPolicy, now: Date): Promise<boolean> {
  const sighting = (await latestSightings(client, schema, [incident.id])).get(incident.id);
  const values = await loadValuePolicy(client, schema, policy.hideValues, paramKeysOf(sighting?.symptoms ?? []), incident.since, incident.lastSeenDay);
  const presentation = presentIncident(incident, sighting, values);
  const payload = CHAT_FORMATS[policy.chatFormat].render({
    event,
    incident,
    presentation,
    mentions: Object.fromEntries(incident.owners.map((owner) => [owner, policy.owners[owner]?.chat_mention])),
    url: incidentUrl(policy.publicUrl, incident.id),
    previousSeverity: incident.notifiedSeverity,
    resolveAfterDays: policy.resolveAfterDays,
  });
  return await enqueueChat(client, schema, { incidentId: incident.id, event, day, payload, summary: summaryLine(event, incident, presentation) }, now);
}
