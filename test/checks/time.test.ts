import { describe, expect, it } from 'vitest';
import { dayEnd, dayStart, weekday } from '../../checks/time.js';

// Expected instants follow the IANA tz database rules for America/New_York (US DST per
// the Energy Policy Act of 2005: second Sunday of March, first Sunday of November, 02:00 local)
// and Europe/Berlin (EU rules: last Sunday of March and October, 01:00 UTC).
describe('business day bounds without a database', () => {
  it.each([
    ['2026-03-07', 'America/New_York', '2026-03-07T05:00:00.000Z', '2026-03-08T05:00:00.000Z'],
    ['2026-03-08', 'America/New_York', '2026-03-08T05:00:00.000Z', '2026-03-09T04:00:00.000Z'],
    ['2026-11-01', 'America/New_York', '2026-11-01T04:00:00.000Z', '2026-11-02T05:00:00.000Z'],
    ['2026-03-29', 'Europe/Berlin', '2026-03-28T23:00:00.000Z', '2026-03-29T22:00:00.000Z'],
    ['2026-10-25', 'Europe/Berlin', '2026-10-24T22:00:00.000Z', '2026-10-25T23:00:00.000Z'],
    ['2026-06-01', 'UTC', '2026-06-01T00:00:00.000Z', '2026-06-02T00:00:00.000Z'],
  ])('%s in %s', (day, timezone, start, end) => {
    expect(dayStart(day, timezone).toISOString()).toBe(start);
    expect(dayEnd(day, timezone).toISOString()).toBe(end);
  });

  it('knows weekdays', () => {
    expect(weekday('2026-12-01')).toBe(2); // a Tuesday
  });
});
