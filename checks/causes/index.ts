/**
 * Likely causes and incidents: every finding of a judged day gets a cause
 * (attribute.ts), and findings with the same cause become one incident draft
 * with one cause and the list of its symptoms. Pure: the service turns drafts
 * into incidents and messages.
 */
import type { CheckInput, Finding, Severity } from '../types.js';
import { attribute, type Attribution } from './attribute.js';
import { baselineDays, baselineOf, measureOn, rate } from './measures.js';
import type { Cause, IncidentDraft } from './types.js';

const SEVERITY_RANK: Record<Severity, number> = { note: 0, warn: 1, page: 2 };

/**
 * The step whose conversion fell (or rose) the most against its usual level on
 * the day: where an end-to-end move happened. Undefined when no step moved.
 */
function localisedStep(input: CheckInput, platform: string | null, direction: Finding['direction']): string | undefined {
  const days = baselineDays(input);
  const slice = { platform, version: '*', dimension: '', value: '' };
  let best: { step: string; change: number } | undefined;
  for (let step = 1; step < input.flow.steps.length; step++) {
    const measure = { kind: 'step_conversion' as const, step, label: '' };
    const today = rate(measureOn(input, measure, input.day, slice));
    const usual = rate(baselineOf(input, measure, slice, days));
    if (!(usual > 0) || !Number.isFinite(today)) continue;
    const change = (today / usual - 1) * (direction === 'up' ? -1 : 1);
    if (!best || change < best.change) best = { step: input.flow.steps[step]!.name, change };
  }
  return best && best.change < 0 ? best.step : undefined;
}

/**
 * The incident's subject: the earliest step of the flow among its symptoms
 * (where a break first shows in the funnel; an end-to-end symptom counts at
 * the step where the funnel moved most), else the first event, parameter or
 * the flow. Stable across the days of an incident even as symptoms come and
 * go, which keeps its fingerprint stable.
 */
function subjectOf(symptoms: readonly Finding[], input: CheckInput, platform: string | null): string {
  const stepOrder = (name: string | undefined) => input.flow.steps.findIndex((step) => step.name === name);
  const steps = symptoms
    .map((f) => (f.subject.type === 'step' ? (f.subject.step ?? f.subject.name) : f.subject.type === 'flow' ? localisedStep(input, platform, f.direction) : undefined))
    .filter((name): name is string => name !== undefined)
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
    const platforms = [...new Set(symptoms.map((f) => f.platform))];
    // One platform when every symptom is on it; a cause seen across platforms (a segment, the calendar) has none.
    const platform = platforms.length === 1 ? platforms[0]! : null;
    const subject = subjectOf(symptoms, input, platform);
    const version = cause.version;
    const since = symptoms.map((f) => f.since ?? f.day).sort()[0]!;
    const segmentKey = cause.segment ? `|${cause.segment.dimension}=${cause.segment.value}` : '';
    // Which platforms' findings crossed their thresholds on a day is chance for a cause that spans platforms:
    // only a release or a platform cause names its platform in the fingerprint, so the incident stays one.
    const fingerprintPlatform = cause.label === 'release' || cause.label === 'platform' ? (platform ?? '*') : '*';
    drafts.push({
      fingerprint: `${input.flow.id}|${cause.label}|${subject}|${fingerprintPlatform}|${version ?? '*'}${segmentKey}`,
      flow: input.flow.id,
      owner: input.flow.owner,
      day: input.day,
      since,
      severity,
      // Messages usually open with their platform and version: then the message is the title.
      title: primary.message.startsWith(`${scopeOf({ ...cause, platform })} `) ? primary.message : `${scopeOf({ ...cause, platform })}: ${primary.message}`,
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
