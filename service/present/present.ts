/**
 * An incident as words and numbers, before any markup: the chat message, the
 * digest and the incident pages all start from this. Every string here is
 * plain text that may contain client data; renderers escape it.
 */
import type { CauseLabel } from '../../checks/causes/types.js';
import type { Finding } from '../../checks/types.js';
import { formatNumber, formatPercent } from '../../checks/messages.js';
import { SEVERITY_RANK } from '../../checks/severity.js';
import type { Incident, Sighting } from '../incidents/types.js';
import { showValue, valuesShown, type ValuePolicy } from './privacy.js';

export interface IncidentPresentation {
  headline: string;
  /** Platform and version, or "all platforms". */
  where: string;
  metric: string | null;
  observed: string | null;
  expected: string | null;
  cause: { label: string; confidence: string; sentence: string; evidence: Array<{ key: string; value: string }> };
  symptoms: Array<{ check: string; text: string }>;
  /** Parameter values were left out (hide_values, or a key with many distinct values). */
  valuesHidden: boolean;
}

const CAUSE_WORDS: Record<CauseLabel, string> = {
  data_delay: 'data delay',
  release: 'app release',
  platform: 'one platform',
  segment: 'one segment',
  calendar: 'calendar day',
  behaviour: 'behaviour change',
};

export function causeWords(label: string): string {
  return CAUSE_WORDS[label as CauseLabel] ?? label;
}

/** Metrics that are fractions, shown as percentages. */
const FRACTION_METRIC = /conversion|share|rate|ratio|completion/;

export function isFractionMetric(metric: string): boolean {
  return FRACTION_METRIC.test(metric);
}

export function formatMeasure(metric: string, value: number): string {
  return isFractionMetric(metric) && Math.abs(value) <= 1 ? formatPercent(value) : formatNumber(value);
}

/** Symptoms in the order they speak for the incident: unmuted first, then the most severe, then the strongest evidence. */
export function rankSymptoms(symptoms: readonly Finding[]): Finding[] {
  return [...symptoms].sort(
    (a, b) =>
      Number(a.muted !== undefined) - Number(b.muted !== undefined) ||
      SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] ||
      Math.abs(b.score) - Math.abs(a.score),
  );
}

export function whereText(platform: string | null, version: string | null): string {
  if (platform === null) return 'all platforms';
  return version === null || version === '' || version === '*' ? platform : `${platform} ${version}`;
}

const MAX_SYMPTOMS = 5;
const MAX_EVIDENCE = 8;

export function presentIncident(incident: Incident, sighting: Sighting | undefined, values: ValuePolicy): IncidentPresentation {
  const symptoms = rankSymptoms(sighting?.symptoms ?? []);
  const shown = valuesShown(values, symptoms);
  const where = whereText(incident.platform, incident.version);
  const primary = symptoms[0];
  const cause = sighting?.cause;
  const label = causeWords(cause?.label ?? incident.causeLabel);
  const evidence = Object.entries(cause?.evidence ?? {})
    .filter(([, value]) => value !== null && (shown || typeof value === 'number'))
    .slice(0, MAX_EVIDENCE)
    .map(([key, value]) => ({ key, value: typeof value === 'number' ? formatNumber(value) : showValue(String(value)) }));
  if (cause?.segment) evidence.unshift({ key: cause.segment.dimension, value: showValue(cause.segment.value) });
  return {
    headline: shown ? (sighting?.title ?? incident.title) : `${incident.subject} on ${where}: ${label}`,
    where,
    metric: primary?.metric ?? null,
    observed: primary ? formatMeasure(primary.metric, primary.observed) : null,
    expected: primary ? `${formatMeasure(primary.metric, primary.expected.low)} to ${formatMeasure(primary.metric, primary.expected.high)}` : null,
    cause: {
      label,
      confidence: cause ? formatPercent(cause.confidence, 0) : '-',
      sentence: shown ? (cause?.sentence ?? '') : `${label} on ${where}; parameter values are not shown`,
      evidence,
    },
    // Flows watching the same events see a data delay alike: one line for the same words.
    symptoms: [
      ...new Map(
        symptoms
          .map((finding) => ({
            check: finding.check,
            text: shown ? finding.message : `${finding.kind} ${finding.metric} of ${finding.subject.name} on ${whereText(finding.platform, finding.version)}`,
          }))
          .map((symptom) => [`${symptom.check}|${symptom.text}`, symptom] as const),
      ).values(),
    ].slice(0, MAX_SYMPTOMS),
    valuesHidden: !shown,
  };
}
