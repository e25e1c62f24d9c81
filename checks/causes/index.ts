/**
 * Likely causes and incidents: every finding of a judged day gets a cause
 * (attribute.ts), and findings with the same cause become one incident draft
 * with one cause and the list of its symptoms. Pure: the service turns drafts
 * into incidents and messages.
 */
import { SEVERITY_RANK } from '../severity.js';
import type { CheckInput, Finding, Severity } from '../types.js';
import { attribute, type Attribution } from './attribute.js';
import { localisedStep } from './measures.js';
import type { Cause, IncidentDraft } from './types.js';

/**
 * The incident's subject: the earliest step of the flow among its symptoms
 * (where a break first shows in the funnel; an end-to-end symptom counts at
 * the step where the funnel moved most), else the first event, parameter or
 * the flow. Stable across the days of an incident even as symptoms come and
 * go, which keeps its fingerprint stable.
 */
const stepName = (input: CheckInput, step: number | undefined) => (step === undefined ? undefined : input.flow.steps[step]!.name);

function subjectOf(symptoms: readonly Finding[], input: CheckInput, platform: string | null): string {
  const stepOrder = (name: string | undefined) => input.flow.steps.findIndex((step) => step.name === name);
  const steps = symptoms
    .map((f) => (f.subject.type === 'step' ? (f.subject.step ?? f.subject.name) : f.subject.type === 'flow' ? stepName(input, localisedStep(input, platform, f.direction)) : undefined))
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

/**
 * The headline: the primary message under the incident's scope, naming the
 * platform once. Messages usually open with their platform (and version):
 * one that opens with the scope is the title as it is; one that opens with
 * the platform the scope starts with gives up its platform to the scope
 * ("android 7.4.0: zone -> rider conversion ...", never "web: web: ...").
 */
export function titleOf(scope: string, platform: string | null, message: string): string {
  const opensWith = (words: string) => message.startsWith(`${words} `) || message.startsWith(`${words}:`);
  if (opensWith(scope)) return message;
  const named = platform !== null && (scope === platform || scope.startsWith(`${platform} `)) && opensWith(platform);
  return `${scope}: ${named ? message.slice(platform.length).replace(/^:?\s*/, '') : message}`;
}

/** Strongest first: the most severe, then the largest score, then by series for a stable order. */
function bySeverity(a: Finding, b: Finding): number {
  return SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] || Math.abs(b.score) - Math.abs(a.score) || a.seriesKey.localeCompare(b.seriesKey);
}

/** Whether `a` leads `b` in the title: unmuted first, then by severity. */
function leads(a: Finding, b: Finding): boolean {
  return (Number(a.muted !== undefined) - Number(b.muted !== undefined) || bySeverity(a, b)) < 0;
}

/** What a data delay is about: the events themselves, whichever flow counts them. */
const DATA_DELAY_SUBJECT = 'events';
/** What a release's fingerprint is about: the version (which the fingerprint names), whatever it broke. */
const RELEASE_SUBJECT = 'version';
/** What a platform cause's fingerprint is about: the platform (which the fingerprint names), whichever series show it. */
const PLATFORM_SUBJECT = 'platform';

/** The incident drafts of one flow's judged day. */
export function analyseCauses(input: CheckInput, findings: readonly Finding[]): IncidentDraft[] {
  const groups = new Map<string, { attribution: Attribution; finding: Finding; symptoms: Finding[] }>();
  for (const finding of findings) {
    const attribution = attribute(finding, input, findings);
    const group = groups.get(attribution.groupKey);
    if (group) {
      group.symptoms.push(finding);
      // The strongest evidence speaks for the group; on a tie, the finding that leads the title.
      const confidence = attribution.cause.confidence - group.attribution.cause.confidence;
      if (confidence > 0 || (confidence === 0 && leads(finding, group.finding))) Object.assign(group, { attribution, finding });
    } else groups.set(attribution.groupKey, { attribution, finding, symptoms: [finding] });
  }
  const drafts: IncidentDraft[] = [];
  for (const { attribution, symptoms } of groups.values()) {
    const cause = attribution.cause;
    const loud = symptoms.filter((f) => !f.muted);
    const ranked = (loud.length > 0 ? loud : symptoms).slice().sort(bySeverity);
    const primary = ranked[0]!;
    const severity = loud.length > 0 ? primary.severity : symptoms.reduce<Severity>((low, f) => (SEVERITY_RANK[f.severity] < SEVERITY_RANK[low] ? f.severity : low), 'page');
    const platforms = [...new Set(symptoms.map((f) => f.platform))];
    // A release or a platform cause is its platform's, whichever symptoms show it (an all-platforms finding the
    // analysis placed there too); otherwise one platform when every symptom is on it, else none.
    const located = cause.label === 'release' || cause.label === 'platform';
    // Behaviour seen on every platform alike is about all of them, whichever platforms' series crossed a threshold.
    const everywhere = cause.label === 'behaviour' && cause.platform === null;
    const platform = located ? cause.platform : everywhere ? null : platforms.length === 1 ? platforms[0]! : null;
    const dataDelay = cause.label === 'data_delay';
    // A segment is about the value across the flow: which of its series crossed a threshold on a day is chance.
    const subject = dataDelay ? DATA_DELAY_SUBJECT : cause.label === 'segment' ? input.flow.id : subjectOf(symptoms, input, platform);
    const version = cause.version;
    const since = symptoms.map((f) => f.since ?? f.day).sort()[0]!;
    const segmentKey = cause.segment ? `|${cause.segment.dimension}=${cause.segment.value}` : '';
    // Which platforms' findings crossed their thresholds on a day is chance for a cause that spans platforms:
    // only a release or a platform cause names its platform in the fingerprint, so the incident stays one.
    const fingerprintPlatform = located ? (platform ?? '*') : '*';
    // Likewise which flows: a late or stopped pipeline holds back every flow at once, so a data delay names none.
    const fingerprintFlow = dataDelay ? '*' : input.flow.id;
    // A release is about its version, not about the series that show it: the step that is no longer reached
    // today and the renamed parameter tomorrow are one incident. Likewise a platform's shift is about the platform
    // (the people it lost show on one step today and another tomorrow), and a change in what people do on every
    // platform about the flow (a regressed step's conversion today, the people after it tomorrow).
    const fingerprintSubject = cause.label === 'release' ? RELEASE_SUBJECT : cause.label === 'platform' ? PLATFORM_SUBJECT : everywhere ? input.flow.id : subject;
    drafts.push({
      fingerprint: `${fingerprintFlow}|${cause.label}|${fingerprintSubject}|${fingerprintPlatform}|${version ?? '*'}${segmentKey}`,
      flows: [input.flow.id],
      owners: [input.flow.owner],
      day: input.day,
      since,
      severity,
      title: titleOf(scopeOf({ ...cause, platform }), platform, primary.message),
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

const union = (a: readonly string[], b: readonly string[]) => [...new Set([...a, ...b])];

/**
 * The drafts of one judged day, every flow's together, as one draft per
 * fingerprint: a data delay seen by several flows becomes one draft listing
 * them all. The more severe draft (the first on a tie) leads with its title
 * and cause; symptoms, flows and owners add up.
 */
export function mergeDrafts(drafts: readonly IncidentDraft[]): IncidentDraft[] {
  const byFingerprint = new Map<string, IncidentDraft>();
  for (const draft of drafts) {
    const seen = byFingerprint.get(draft.fingerprint);
    if (!seen) {
      byFingerprint.set(draft.fingerprint, draft);
      continue;
    }
    const lead = SEVERITY_RANK[draft.severity] > SEVERITY_RANK[seen.severity] ? draft : seen;
    const platform = draft.platform === seen.platform ? lead.platform : null;
    byFingerprint.set(draft.fingerprint, {
      ...lead,
      flows: union(seen.flows, draft.flows),
      owners: union(seen.owners, draft.owners),
      since: draft.since < seen.since ? draft.since : seen.since,
      platform,
      cause: { ...lead.cause, platform },
      symptoms: [...seen.symptoms, ...draft.symptoms],
      muted: seen.muted && draft.muted,
    });
  }
  return [...byFingerprint.values()];
}
