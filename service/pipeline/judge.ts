/**
 * Judging one flow on one day: the same pure core serves live runs and
 * backtests, so a replay over stored rollups gives exactly what a live run gave.
 */
import { registry } from '../../checks/registry.js';
import type { BandExceedance, CheckInput, CheckModule, Finding, WithPlatforms } from '../../checks/types.js';
import type { FlowConfig } from '../config/schema.js';

export interface Judgement {
  verdict: 'judged' | 'not_ready';
  reason?: string;
  findings: Finding[];
  /** Series of open incidents (`input.open`) still outside their expected band, under the finding thresholds: no clean day for those incidents. */
  outside: BandExceedance[];
  /** Checks that failed with an error: counted and logged by the caller, never silent. */
  errors: Array<{ check: string; error: Error }>;
}

const LEARNING = 'learning: ';

/** The reason stored with a day judged while the flow was learning: "learning: 12 of 28 days". */
export function learningReason(learning: NonNullable<CheckInput['learning']>): string {
  return `${LEARNING}${learning.days} of ${learning.needed} days`;
}

export function isLearningReason(reason: string | null | undefined): boolean {
  return reason?.startsWith(LEARNING) ?? false;
}

type Options = WithPlatforms<Record<string, unknown>> & { enabled: boolean };

export function judgeDay(input: CheckInput, flow: FlowConfig, checks: readonly CheckModule[] = registry): Judgement {
  const errors: Judgement['errors'] = [];
  const active = checks
    .map((check) => ({ check, options: flow.checks[check.id] as Options | undefined }))
    .filter((entry): entry is { check: CheckModule; options: Options } => entry.options?.enabled === true);

  let verdict: Judgement['verdict'] = 'judged';
  let reason: string | undefined = input.learning ? learningReason(input.learning) : undefined;
  // A day without a single event is no evidence that all is well: it is held back whatever the checks say.
  if (!input.status.some((row) => row.day === input.day && row.events > 0 && input.flow.platforms.includes(row.platform))) {
    verdict = 'not_ready';
    reason = `no events at all for ${input.day}`;
  }
  for (const { check, options } of active) {
    if (!check.gate) continue;
    try {
      const readiness = check.gate(input, options);
      if (!readiness.ready) {
        verdict = 'not_ready';
        reason = readiness.reason ?? `${check.id} holds the day back`;
      }
    } catch (error) {
      errors.push({ check: check.id, error: error as Error });
    }
  }

  const findings: Finding[] = [];
  for (const { check, options } of active) {
    if (verdict === 'not_ready' && !check.gate) continue;
    // The first days are the baseline: a check that compares with history waits until the flow has learnt it.
    if (input.learning && check.needsHistory) continue;
    try {
      findings.push(...check.run(input, options));
    } catch (error) {
      errors.push({ check: check.id, error: error as Error });
    }
  }
  // Hysteresis: of the open incidents' series the checks did not report, those still outside their band.
  const outside: BandExceedance[] = [];
  const reported = new Set(findings.map((finding) => finding.seriesKey));
  for (const { check, options } of active) {
    if (!check.outside || verdict === 'not_ready' || (input.learning && check.needsHistory) || !input.open?.length) continue;
    try {
      outside.push(...check.outside(input, options).filter((exceedance) => !reported.has(exceedance.seriesKey)));
    } catch (error) {
      errors.push({ check: check.id, error: error as Error });
    }
  }
  for (const finding of findings) {
    const mute = flow.mutes.find(
      (m) =>
        m.check === finding.check &&
        input.day <= m.until &&
        (m.platform === undefined || m.platform === finding.platform) &&
        (m.subject === undefined || m.subject === finding.subject.name || m.subject === finding.subject.event),
    );
    if (mute) finding.muted = mute.reason;
  }
  return { verdict, ...(reason !== undefined ? { reason } : {}), findings, outside, errors };
}
