/**
 * Likely causes and incidents: every finding of a judged day gets a cause
 * (attribute.ts), and findings with the same cause become one incident draft
 * with one cause and the list of its symptoms. Pure: the service turns drafts
 * into incidents and messages.
 */
import type { CheckInput, Finding, Severity } from '../types.js';
import { attribute, type Attribution } from './attribute.js';
import type { Cause, IncidentDraft } from './types.js';

const SEVERITY_RANK: Record<Severity, number> = { note: 0, warn: 1, page: 2 };

/**
 * The incident's subject: the earliest step of the flow among its symptoms
 * (where a break first shows in the funnel), else the first event, parameter
 * or the flow. Stable across the days of an incident even as symptoms come and
 * go, which keeps its fingerprint stable.
 */
function subjectOf(symptoms: readonly Finding[], input: CheckInput): string {
  const stepOrder = (name: string | undefined) => input.flow.steps.findIndex((step) => step.name === name);
  const steps = symptoms
    .filter((f) => f.subject.type === 'step')
    .map((f) => f.subject.step ?? f.subject.name)
    .sort((a, b) => stepOrder(a) - stepOrder(b));
  if (steps.length > 0) return steps[0]!;
  const named = symptoms.map((f) => f.subject).find((s) => s.type === 'event' || s.type === 'param');
  return named?.name ?? input.flow.id;
}

function scopeOf(cause: Cause): string {
  if (cause.segment) return `${cause.segment.dimension}=${cause.segment.value}`;
  return [cause.platform, cause.version].filter((part) => part !== null).join(' ') || 'all platforms';
}

/** The incident drafts of one flow's judged day. */
export function analyseCauses(input: CheckInput, findings: readonly Finding[]): IncidentDraft[] {
  const groups = new Map<string, { attribution: Attribution; symptoms: Finding[] }>();
  for (const finding of findings) {
    const attribution = attribute(finding, input, findings);
    const group = groups.get(attribution.groupKey);
    if (group) {
      group.symptoms.push(finding);
      // The strongest evidence speaks for the group.
      if (attribution.cause.confidence > group.attribution.cause.confidence) group.attribution = attribution;
    } else groups.set(attribution.groupKey, { attribution, symptoms: [finding] });
  }
  const drafts: IncidentDraft[] = [];
  for (const { attribution, symptoms } of groups.values()) {
    const cause = attribution.cause;
    const loud = symptoms.filter((f) => !f.muted);
    const ranked = (loud.length > 0 ? loud : symptoms).slice().sort(
      (a, b) => SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] || Math.abs(b.score) - Math.abs(a.score) || a.seriesKey.localeCompare(b.seriesKey),
    );
    const primary = ranked[0]!;
    const severity = loud.length > 0 ? primary.severity : symptoms.reduce<Severity>((low, f) => (SEVERITY_RANK[f.severity] < SEVERITY_RANK[low] ? f.severity : low), 'page');
    const subject = subjectOf(symptoms, input);
    const platforms = [...new Set(symptoms.map((f) => f.platform))];
    // One platform when every symptom is on it; a cause seen across platforms (a segment, the calendar) has none.
    const platform = platforms.length === 1 ? platforms[0]! : null;
    const version = cause.version;
    const since = symptoms.map((f) => f.since ?? f.day).sort()[0]!;
    const segmentKey = cause.segment ? `|${cause.segment.dimension}=${cause.segment.value}` : '';
    drafts.push({
      fingerprint: `${input.flow.id}|${cause.label}|${subject}|${platform ?? '*'}|${version ?? '*'}${segmentKey}`,
      flow: input.flow.id,
      owner: input.flow.owner,
      day: input.day,
      since,
      severity,
      title: `${scopeOf({ ...cause, platform })}: ${primary.message}`,
      subject,
      platform,
      version,
      cause: { ...cause, platform },
      symptoms,
      muted: loud.length === 0,
    });
  }
  return drafts.sort((a, b) => SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] || a.fingerprint.localeCompare(b.fingerprint));
}
