/**
 * The row limits bound a day's rollup on each warehouse engine: per platform
 * the event names (watched ones first), versions and values of each
 * dimension with the most events, and per watched event the parameter keys
 * with the most events, are kept; how many distinct ones there were is in
 * the day's status. Limits here are tiny so a handful of rows reaches them.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { rollupDay, type RollupContext } from '../../service/rollup/rollup-day.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { openTestWarehouse, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const DAY = '2026-06-10';

const flow: FlowDefinition = {
  id: 'pass',
  owner: 'team',
  steps: [
    { name: 'intro', event: 'screen_shown', where: { view: 'intro' } },
    { name: 'done', event: 'purchase', where: {} },
  ],
  conversionWindowSeconds: 3600,
  stepTimeCapSeconds: 600,
  entry: 'first_step_only',
  platforms: ['android'],
  events: ['screen_shown', 'purchase'],
  contracts: {},
};

let minute = 0;
function rows(n: number, fields: Partial<RawEvent>): RawEvent[] {
  return Array.from({ length: n }, () => ({
    at: new Date(Date.parse(`${DAY}T10:00:00Z`) + minute++ * 60_000),
    name: 'screen_shown',
    user: `u${minute}`,
    device: null,
    platform: 'Android',
    version: '7.1.0',
    props: null,
    country: 'US',
    channel: 'direct',
    ...fields,
  }));
}

/**
 * Event totals: e1 5, e2 4, screen_shown 3 (watched), e3 3, e4 2; versions v1 5, v2 4, 7.1.0 3, v3 3, v4 2;
 * countries c1 5, c2 4, US 3, c3 3, c4 2; screen_shown's keys a 3, view 3, b 2, c 1.
 */
const EVENTS: RawEvent[] = [
  ...rows(1, { props: { view: 'intro', a: 1, b: 1, c: 1 } }),
  ...rows(1, { props: { view: 'intro', a: 1, b: 1 } }),
  ...rows(1, { props: { view: 'intro', a: 1 } }),
  ...[5, 4, 3, 2].flatMap((n, i) => rows(n, { name: `e${i + 1}`, version: `v${i + 1}`, country: `c${i + 1}` })),
];

describe.each(TEST_ENGINES)('row limits on %s', (engine) => {
  let warehouse: TestWarehouse;
  let state: TestSchema;
  let ctx: RollupContext;

  beforeAll(async () => {
    warehouse = await openTestWarehouse(engine, 'lim');
    state = await createTestSchema('limst');
    await migrate(state.pool, state.schema);
    ctx = { warehouse: warehouse.warehouse, state: state.pool, stateSchema: state.schema, timezone: 'UTC', flows: [flow] };
    await warehouse.insert(EVENTS);
  }, 120_000);
  afterAll(async () => {
    await warehouse?.drop();
    await state?.drop();
  });

  const s = () => quoteIdent(state.schema);
  const eventRows = async () =>
    (await state.pool.query<{ row: string }>(`select event || ' ' || version || ' ' || dimension || ' ' || value || ' ' || events as row from ${s()}.event_days`)).rows.map((r) => r.row).sort();
  const keys = async () => (await state.pool.query<{ key: string }>(`select distinct key from ${s()}.param_days order by 1`)).rows.map((r) => r.key);
  const overLimits = async () => (await state.pool.query<{ over_limits: unknown }>(`select over_limits from ${s()}.day_status where platform = 'android'`)).rows[0]!.over_limits;

  it('keeps everything under the default limits and reports none reached', async () => {
    warehouse.mapping.limits = undefined;
    await rollupDay(ctx, DAY);
    expect(await eventRows()).toHaveLength(5 * 4);
    expect(await keys()).toEqual(['a', 'b', 'c', 'view']);
    expect(await overLimits()).toEqual({});
  }, 120_000);

  it('keeps the values with the most events within each limit, the watched event first, and reports what it saw', async () => {
    warehouse.mapping.limits = { event_names: 3, versions: 2, dimension_values: 2, param_keys: 2 };
    await rollupDay(ctx, DAY);
    expect(await eventRows()).toEqual([
      'e1 *   5',
      'e1 * channel direct 5',
      'e1 * country c1 5',
      'e1 v1   5',
      'e2 *   4',
      'e2 * channel direct 4',
      'e2 * country c2 4',
      'e2 v2   4',
      'screen_shown *   3',
      'screen_shown * channel direct 3',
    ]);
    expect(await keys()).toEqual(['a', 'view']);
    expect(await overLimits()).toEqual({
      event_names: { seen: 5, kept: 3 },
      versions: { seen: 5, kept: 2 },
      dimension_values: { seen: 5, kept: 2 },
      param_keys: { seen: 4, kept: 2 },
    });
  }, 120_000);
});
