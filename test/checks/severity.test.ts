/**
 * The one severity list: quietest first, and ranks that are the 1-based
 * places `array_position` gives in SQL (PostgreSQL documentation, "Array
 * Functions and Operators": array subscripts start at 1), so the lifecycle's
 * SQL and TypeScript agree on which severity is higher.
 */
import { describe, expect, it } from 'vitest';
import { SEVERITIES, SEVERITY_RANK } from '../../checks/severity.js';

describe('severity', () => {
  it.each([
    ['note', 1],
    ['warn', 2],
    ['page', 3],
  ] as const)('ranks %s at %i, its 1-based place in the list', (severity, rank) => {
    expect(SEVERITY_RANK[severity]).toBe(rank);
    expect(SEVERITIES.indexOf(severity) + 1).toBe(rank);
  });
});
