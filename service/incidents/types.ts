/**
 * Incidents as stored in the state schema (002_incidents_outbox.sql): one row
 * per fingerprint episode plus one sighting per judged day it was seen.
 */
import type { Cause } from '../../checks/causes/types.js';
import type { Day, Finding, Severity } from '../../checks/types.js';
import type { ChatFormatId } from '../config/schema.js';

export type IncidentStatus = 'open' | 'ongoing' | 'resolved';
/** What a chat message about an incident announces (`still_held_back`: a data delay that goes on, see incidents/apply.ts). */
export type IncidentEvent = 'opened' | 'severity_raised' | 'still_held_back' | 'resolved';

export interface Incident {
  /** Stable and URL-safe: the page is `${http.public_url}/incidents/${id}`. */
  id: string;
  fingerprint: string;
  /** The first of `flows`: the incident's id starts with it. */
  flow: string;
  /** The owner of `flow`. */
  owner: string;
  /** The flows the incident holds back (one, except for a data delay), in the order they first saw it. */
  flows: string[];
  /** Their owners, the ones its messages mention. */
  owners: string[];
  status: IncidentStatus;
  /** Highest severity of any sighting. */
  severity: Severity;
  /** The latest sighting was muted. */
  muted: boolean;
  title: string;
  subject: string;
  platform: string | null;
  version: string | null;
  causeLabel: string;
  since: Day;
  openedDay: Day;
  lastSeenDay: Day;
  daysSeen: number;
  resolvedDay: Day | null;
  /** clean_days: not seen for `resolve_after_days`; withdrawn: a rerun no longer showed it; late_data: late rows restated its first day and the complete data no longer shows it. */
  resolution: 'clean_days' | 'withdrawn' | 'late_data' | null;
  notifiedSeverity: Severity | null;
  lastNotifiedAt: string | null;
  openedAt: string;
  updatedAt: string;
  resolvedAt: string | null;
}

/** What was seen of an incident on one judged day. */
export interface Sighting {
  incidentId: string;
  /** The flows that saw it on the day. */
  flows: string[];
  day: Day;
  since: Day;
  severity: Severity;
  muted: boolean;
  title: string;
  cause: Cause;
  symptoms: Finding[];
}

/** The part of the configuration incidents and their messages follow. */
export interface IncidentPolicy {
  /** An incident resolves after this many judged days of its flow without it. */
  resolveAfterDays: number;
  /** At most one repeat announcement (a severity rise) per incident within this many seconds. */
  repeatAfterSeconds: number;
  /** Base URL of the incident pages. */
  publicUrl: string;
  owners: Record<string, { chat_mention?: string; email: string[] }>;
  /** Never show parameter values. */
  hideValues: boolean;
  /** How chat messages are laid out (`delivery.chat.format`). */
  chatFormat: ChatFormatId;
}

/** The page of an incident. */
export function incidentUrl(publicUrl: string, id: string): string {
  return `${publicUrl.replace(/\/+$/, '')}/incidents/${encodeURIComponent(id)}`;
}
