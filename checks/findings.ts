/**
 * What a finding says about its day beyond the numbers, shared by the checks:
 * the calendar note with the severity it implies, and since when its series
 * has been anomalous.
 */
import { runStart } from './series.js';
import type { CheckInput, Day, Finding, Severity } from './types.js';

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
