/**
 * What a finding says about its day beyond the numbers, shared by the checks:
 * the calendar note with the severity it implies, and since when its series
 * has been anomalous.
 */
import { runStart } from './series.js';
import type { BandExceedance, CheckInput, Day, Finding, Severity } from './types.js';

/**
 * Hysteresis: a series of an open incident counts as still outside its
 * expected band while it is beyond this share of every finding threshold (the
 * practical change and the score alike). An alarm deadband: an alarm clears
 * at a value short of the one that raised it (ANSI/ISA-18.2-2016, "Management
 * of Alarm Systems for the Process Industries"; cited from memory). The half is
 * our heuristic.
 */
export const HOLD_SHARE = 0.5;

/** The band exceedance a finding judged at the hysteresis band stands for. */
export function exceedanceOf(finding: Finding): BandExceedance | undefined {
  if (finding.direction === 'none') return undefined;
  const { check, flow, seriesKey, platform, direction, observed, expected } = finding;
  return { check, flow, seriesKey, platform, direction, observed, expected };
}

/**
 * On a declared low day that drops (or high day that rises) the move was
 * announced: the finding is kept as a note that the cause analysis labels
 * "calendar". Any other finding on a calendar day keeps its severity and
 * carries the note for context.
 */
export function calendarSeverity(input: CheckInput, direction: Finding['direction'], severity: Severity): { severity: Severity; calendar?: string } {
  const entries = input.calendar.filter((entry) => entry.day === input.day);
  if (entries.length === 0) return { severity };
  const announced = entries.some((entry) => (entry.expect === 'low' ? direction === 'down' : direction === 'up'));
  return { severity: announced ? 'note' : severity, calendar: entries.map((entry) => entry.note).join('; ') };
}

/** First day of the run of anomalous days of `seriesKey` that ends with the judged day. */
export function anomalousSince(input: CheckInput, seriesKey: string): Day | undefined {
  const flagged = new Set(input.anomalous[seriesKey] ?? []);
  flagged.add(input.day);
  return runStart(input.days, flagged);
}
