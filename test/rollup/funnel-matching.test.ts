/**
 * Property test: the funnel matching, event counts and step counts of each
 * warehouse engine (PostgreSQL, and ClickHouse in-process through chdb)
 * equal brute-force TypeScript references (test/helpers/reference.ts) on
 * random event sequences with out-of-order rows, repeats, steps past the
 * window, user/device fallback, unmapped platforms and several platforms.
 */
import fc from 'fast-check';
import { afterAll, beforeAll, describe, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import type { DayRange } from '../../service/warehouse/engine.js';
import { expectCountRows, expectFunnelRows, expectStepRows } from '../helpers/compare.js';
import { referenceCounts, referenceFunnel, referenceStepCounts } from '../helpers/reference.js';
import { openTestWarehouse, propertyTimeout, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const DAY = '2026-03-10';
const TZ = 'America/New_York';

function flow(entry: FlowDefinition['entry']): FlowDefinition {
  return {
    id: 'pass',
    owner: 'team',
    steps: [
      { name: 'intro', event: 'screen_shown', where: { view: 'intro' } },
      { name: 'zone', event: 'screen_shown', where: { view: ['zone', 'zone_v2'] } },
      { name: 'pay', event: 'tap_pay', where: {} },
      { name: 'done', event: 'purchase', where: { outcome: 'approved', test: false } },
    ],
    // Short window and cap so random whole-minute gaps land exactly on both boundaries often.
    conversionWindowSeconds: 600,
    stepTimeCapSeconds: 240,
    entry,
    platforms: ['web', 'android', 'ios'],
    events: ['screen_shown', 'tap_pay', 'purchase'],
    contracts: {},
  };
}

const eventArb = fc.oneof(
  fc.record({ name: fc.constant('screen_shown'), props: fc.record({ view: fc.constantFrom('intro', 'zone', 'zone_v2', 'home') }) }),
  fc.record({ name: fc.constant('tap_pay'), props: fc.constant({}) }),
  fc.record({
    name: fc.constant('purchase'),
    props: fc.record({ outcome: fc.constantFrom('approved', 'declined'), test: fc.boolean() }),
  }),
  fc.record({ name: fc.constant('app_open'), props: fc.constant(null) }),
);

/** A person's burst of events: close in time so steps match, sometimes past the window or the day. */
const journeyArb = fc.record({
  user: fc.option(fc.constantFrom('u1', 'u2', 'u3'), { nil: null }),
  device: fc.option(fc.constantFrom('d1', 'd2', 'd3', 'd4'), { nil: null }),
  platform: fc.constantFrom('web', 'Web', 'Android', 'iOS', 'kiosk'),
  version: fc.option(fc.constantFrom('1.0', '1.1', '2.0'), { nil: null }),
  country: fc.constantFrom('US', 'CA', 'MX'),
  channel: fc.constantFrom('direct', 'email'),
  // Minutes from local midnight: before the day, inside it, and into the next one.
  startMinute: fc.integer({ min: -40, max: 24 * 60 + 20 }),
  events: fc.array(fc.record({ event: eventArb, gapMinutes: fc.integer({ min: -2, max: 6 }), sameTime: fc.boolean() }), {
    minLength: 1,
    maxLength: 7,
  }),
});

type Journey = typeof journeyArb extends fc.Arbitrary<infer T> ? T : never;

function toRows(journeys: Journey[], lo: Date): RawEvent[] {
  const rows: RawEvent[] = [];
  for (const journey of journeys) {
    let at = lo.getTime() + journey.startMinute * 60_000;
    for (const { event, gapMinutes, sameTime } of journey.events) {
      if (!sameTime) at += gapMinutes * 60_000;
      rows.push({
        at: new Date(at),
        name: event.name,
        user: journey.user,
        device: journey.device,
        platform: journey.platform,
        version: journey.version,
        props: event.props,
        country: journey.country,
        channel: journey.channel,
      });
    }
  }
  // Rows arrive out of order in a real table.
  return rows.reverse();
}

describe.each(TEST_ENGINES)('funnel matching on %s (vs brute-force reference)', (engine) => {
  let db: TestWarehouse;
  let range: DayRange;

  beforeAll(async () => {
    db = await openTestWarehouse(engine, 'funnel');
    range = await db.warehouse.dayBounds(DAY, TZ);
  });
  afterAll(async () => db.drop());

  const load = async (journeys: Journey[]) => {
    const rows = toRows(journeys, range.lo);
    await db.clear();
    await db.insert(rows);
    return rows;
  };

  for (const entry of ['first_step_only', 'any_step'] as const) {
    it(`agrees with the reference (entry: ${entry})`, async () => {
      const definition = flow(entry);
      await fc.assert(
        fc.asyncProperty(fc.array(journeyArb, { minLength: 1, maxLength: 12 }), async (journeys) => {
          const rows = await load(journeys);
          const { funnel } = await db.warehouse.flow(definition, range);
          expectFunnelRows(funnel, referenceFunnel(rows, definition, db.mapping.platforms, db.mapping.dimensions, range.lo, range.hi), { timing: true });
        }),
        { numRuns: 60, seed: 20261201 },
      );
    }, propertyTimeout(engine));
  }

  it('event counts and distinct people agree with the reference', async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(journeyArb, { minLength: 1, maxLength: 12 }), async (journeys) => {
        const rows = await load(journeys);
        expectCountRows((await db.warehouse.eventCounts(range, [])).rows, referenceCounts(rows, db.mapping.platforms, db.mapping.dimensions, range.lo, range.hi));
      }),
      { numRuns: 60, seed: 20261202 },
    );
  }, propertyTimeout(engine));

  it('step counts (any order) agree with the reference', async () => {
    const definition = flow('first_step_only');
    await fc.assert(
      fc.asyncProperty(fc.array(journeyArb, { minLength: 1, maxLength: 12 }), async (journeys) => {
        const rows = await load(journeys);
        const { steps } = await db.warehouse.flow(definition, range);
        expectStepRows(steps, referenceStepCounts(rows, definition, db.mapping.platforms, range.lo, range.hi));
      }),
      { numRuns: 40, seed: 20261203 },
    );
  }, propertyTimeout(engine));
});
