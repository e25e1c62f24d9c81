/**
 * How plumbline marks a severity, and an incident's end, wherever it shows
 * them (chat, pages, digest): the word first, then a gauge of three bars
 * filled by level. The gauge is plain text, reads without colour, and keeps
 * its order when copied into a ticket or a terminal.
 */
import type { Severity } from '../../checks/types.js';

export const SEVERITY_MARK: Record<Severity, string> = { page: '▮▮▮', warn: '▮▮▯', note: '▮▯▯' };

/** An incident that resolved: the gauge emptied. */
export const RESOLVED_MARK = '▯▯▯';

/** `page ▮▮▮`: a severity's word, then its mark. */
export function severityLabel(severity: Severity): string {
  return `${severity} ${SEVERITY_MARK[severity]}`;
}
