/**
 * What a finding says about its day beyond the numbers, shared by the
 * `conversion` and `seasonal` checks: the calendar note with the severity it
 * implies, and since when the series has been anomalous.
 */
import { runStart } from '../series.js';
import type { CheckInput, Day, Severity } from '../types.js';

/**
 * The calendar note of the judged day, and the severity a finding gets there:
 * on a declared low day that drops (or high day that rises) the move was
 * announced, so it is reported as a note the cause analysis labels "calendar";
 * a move against the declared expectation keeps the configured severity.
 */
export function calendarSeverity(input: CheckInput, direction: 'up' | 'down', severity: Severity): { severity: Severity; calendar?: string } {
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
