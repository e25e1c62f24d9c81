/**
 * The latest cron occurrence at or before an instant, in a timezone, across
 * DST changes (America/New_York: 2026-03-08 spring forward, 2026-11-01 fall
 * back, per the US Energy Policy Act of 2005 rules).
 */
import { describe, expect, it } from 'vitest';
import { latestOccurrence } from '../../service/scheduler/occurrence.js';

const NY = 'America/New_York';

describe('latestOccurrence', () => {
  it.each([
    ['0 8 * * 1', '2026-03-10T12:00:00Z', '2026-03-09T12:00:00.000Z'],
    ['0 8 * * 1', '2026-03-09T12:00:00Z', '2026-03-09T12:00:00.000Z'],
    ['0 8 * * 1', '2026-03-09T11:59:00Z', '2026-03-02T13:00:00.000Z'],
    ['30 6 * * *', '2026-11-02T00:00:00Z', '2026-11-01T11:30:00.000Z'],
    ['15 2 * * *', '2026-03-08T12:00:00Z', '2026-03-07T07:15:00.000Z'],
    ['0 9,17 * * 1-5', '2026-11-20T23:00:00Z', '2026-11-20T22:00:00.000Z'],
    ['0 8 1 * *', '2026-11-20T12:00:00Z', undefined],
  ])('%s before %s: %s', (cron, now, expected) => {
    expect(latestOccurrence(cron, NY, new Date(now), 8)?.toISOString()).toBe(expected);
  });
});
