/**
 * Likely causes: what the cause analysis (checks/causes/) attaches to the
 * findings of a judged day, and the incident drafts it groups them into.
 * Pure data: the service turns drafts into incidents and messages.
 */
import type { Day, Finding, Severity } from '../types.js';

/** In order of evidence: the first label whose test passes wins. */
export type CauseLabel = 'data_delay' | 'release' | 'platform' | 'segment' | 'calendar' | 'behaviour';

export interface Cause {
  label: CauseLabel;
  /** 0 to 1: how strongly the evidence supports this label over the next one. */
  confidence: number;
  /**
   * One plain-text sentence with the supporting numbers, e.g. "android 7.4.0
   * (first seen 2026-10-13, 41% of android people) stopped sending
   * rider_details views: 0 of 3,120 people vs 96% on 7.3.x". Contains client
   * data (event names, values): renderers must escape it.
   */
  sentence: string;
  platform: string | null;
  version: string | null;
  segment?: { dimension: string; value: string; explanatoryPower: number; surprise: number };
  /** The numbers behind the label (check-specific keys). */
  evidence: Record<string, number | string | null>;
}

export interface IncidentDraft {
  /**
   * Stable across days so a five-day incident is one incident: flow, cause
   * label, subject, platform, version. A data delay's names no flow: one
   * stop of the pipeline is one incident for every flow it holds back.
   */
  fingerprint: string;
  /** The flows whose findings the draft holds, and their owners, in the order judged. */
  flows: string[];
  owners: string[];
  /** The judged day the draft comes from. */
  day: Day;
  /** First anomalous day among the symptoms. */
  since: Day;
  /** Highest severity among unmuted symptoms (the lowest one when all are muted). */
  severity: Severity;
  /** Short headline, plain text (escape when rendering). */
  title: string;
  /** Event, step or `event.param` the incident is about. */
  subject: string;
  platform: string | null;
  version: string | null;
  cause: Cause;
  /** The findings grouped into this incident. */
  symptoms: Finding[];
  /** Every symptom is muted: recorded, never notified. */
  muted: boolean;
}
