/**
 * The one list of severities, quietest first, and their rank. Checks, causes,
 * the incident lifecycle (in TypeScript and, as `array_position` over this
 * list, in SQL), the pages, the CLI and the evaluation all order severities by
 * it.
 *
 * @example SEVERITY_RANK.page > SEVERITY_RANK.warn // true
 */
import type { Severity } from './types.js';

export const SEVERITIES: readonly Severity[] = ['note', 'warn', 'page'];

/** A severity's 1-based place in SEVERITIES: note 1, warn 2, page 3. */
export const SEVERITY_RANK = Object.fromEntries(SEVERITIES.map((severity, i) => [severity, i + 1])) as Readonly<Record<Severity, number>>;
