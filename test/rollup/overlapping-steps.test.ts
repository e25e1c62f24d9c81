/**
 * Property test for flows whose steps can match the same event (a step on
 * any `screen_shown`, a later one on one screen): the flow statements then
 * repeat each row once per matching step instead of picking one step. Funnel
 * and step counts of each engine are compared with the brute-force
 * references in test/helpers/reference.ts, as in funnel-matching.test.ts.
 */
import fc from 'fast-check';
import { afterAll, beforeAll, describe, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import type { DayRange } from '../../service/warehouse/engine.js';
import { expectFunnelRows, expectStepRows } from '../helpers/compare.js';
import { referenceFunnel, referenceStepCounts } from '../helpers/reference.js';
import { openTestWarehouse, propertyTimeout, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const DAY = '2026-03-10';
const TZ = 'America/New_York';

function flow(entry: FlowDefinition['entry']): FlowDefinition {
  return {
    id: 'browse',
    owner: 'team',
    steps: [
      { name: 'any_screen', event: 'screen_shown', where: {} },
      { name: 'zone', event: 'screen_shown', where: { view: 'zone' } },
      { name: 'zone_again', event: 'screen_shown', where: { view: ['zone', 'home'] } },
      { name: 'pay', event: 'tap_pay', where: {} },
    ],
    conversionWindowSeconds: 600,
    stepTimeCapSeconds: 240,
    entry,
    platforms: ['web', 'android', 'ios'],
    events: ['screen_shown', 'tap_pay'],
    contracts: {},
  };
}

const journeyArb = fc.record({
  user: fc.option(fc.constantFrom('u1', 'u2'), { nil: null }),
  device: fc.option(fc.constantFrom('d1', 'd2', 'd3'), { nil: null }),
  platform: fc.constantFrom('web', 'Android', 'iOS'),
  version: fc.option(fc.constantFrom('1.0', '2.0'), { nil: null }),
  country: fc.constantFrom('US', 'CA'),
  startMinute: fc.integer({ min: -20, max: 24 * 60 + 10 }),
  events: fc.array(
    fc.record({
      name: fc.constantFrom('screen_shown', 'screen_shown', 'tap_pay'),
      view: fc.constantFrom('zone', 'home', 'intro'),
      gapMinutes: fc.integer({ min: -1, max: 5 }),
    }),
    { minLength: 1, maxLength: 6 },
  ),
});

function toRows(journeys: Array<typeof journeyArb extends fc.Arbitrary<infer T> ? T : never>, lo: Date): RawEvent[] {
  return journeys.flatMap((journey) => {
    let at = lo.getTime() + journey.startMinute * 60_000;
    return journey.events.map((event) => {
      at += event.gapMinutes * 60_000;
      return {
        at: new Date(at),
        name: event.name,
        user: journey.user,
        device: journey.device,
        platform: journey.platform,
        version: journey.version,
        props: event.name === 'screen_shown' ? { view: event.view } : {},
        country: journey.country,
        channel: 'direct',
      };
    });
  });
}

describe.each(TEST_ENGINES)('flows with overlapping steps on %s (vs brute-force reference)', (engine) => {
  let db: TestWarehouse;
  let range: DayRange;

  beforeAll(async () => {
    db = await openTestWarehouse(engine, 'overlap');
    range = await db.warehouse.dayBounds(DAY, TZ);
  });
  afterAll(async () => db.drop());

  for (const entry of ['first_step_only', 'any_step'] as const) {
    it(`funnel and step counts agree with the reference (entry: ${entry})`, async () => {
      const definition = flow(entry);
      await fc.assert(
        fc.asyncProperty(fc.array(journeyArb, { minLength: 1, maxLength: 8 }), async (journeys) => {
          const rows = toRows(journeys, range.lo);
          await db.clear();
          await db.insert(rows);
          const { funnel, steps } = await db.warehouse.flow(definition, range);
          expectFunnelRows(funnel, referenceFunnel(rows, definition, db.mapping.platforms, db.mapping.dimensions, range.lo, range.hi), { timing: false });
          expectStepRows(steps, referenceStepCounts(rows, definition, db.mapping.platforms, range.lo, range.hi));
        }),
        { numRuns: 40, seed: 20261204 },
      );
    }, propertyTimeout(engine));
  }
});
