/**
 * The daily rollup on each warehouse engine (PostgreSQL, and ClickHouse
 * in-process through chdb), state in PostgreSQL: day boundaries in the
 * business timezone on the two 2026 DST days of America/New_York (23 and 25
 * hours), and idempotence (a rerun of a day leaves exactly what the first run
 * left).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { rollupDay, type RollupContext } from '../../service/rollup/rollup-day.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { openTestWarehouse, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const TZ = 'America/New_York';

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
  platforms: ['web', 'android', 'ios'],
  events: ['screen_shown', 'purchase'],
  contracts: {},
};

function event(iso: string, name: string, user: string, props: Record<string, unknown> = {}, platform = 'Android'): RawEvent {
  return { at: new Date(iso), name, user, device: null, platform, version: '7.1.0', props, country: 'US', channel: 'direct' };
}

describe.each(TEST_ENGINES)('rollupDay on %s', (engine) => {
  let warehouse: TestWarehouse;
  let state: TestSchema;
  let ctx: RollupContext;

  beforeAll(async () => {
    warehouse = await openTestWarehouse(engine, 'wh');
    state = await createTestSchema('st');
    await migrate(state.pool, state.schema);
    ctx = { warehouse: warehouse.warehouse, state: state.pool, stateSchema: state.schema, timezone: TZ, flows: [flow] };
    // Instants are UTC. New York is UTC-5 in winter, UTC-4 in summer; clocks jump
    // at 02:00 local on 2026-03-08 (spring forward) and 2026-11-01 (fall back), per
    // the US Energy Policy Act of 2005 rules as encoded in the IANA tz database.
    await warehouse.insert([
      // 2026-03-07 (EST): the last instant before local midnight belongs to the 7th.
      event('2026-03-08T04:59:59Z', 'screen_shown', 'a', { view: 'intro' }),
      // 2026-03-08: starts 05:00Z (EST midnight), ends 04:00Z on the 9th (EDT midnight): 23 hours.
      event('2026-03-08T05:00:00Z', 'screen_shown', 'b', { view: 'intro' }),
      event('2026-03-08T05:20:00Z', 'purchase', 'b'),
      event('2026-03-08T07:30:00Z', 'screen_shown', 'c', { view: 'intro' }), // 03:30 EDT, after the jump
      event('2026-03-09T03:59:59Z', 'screen_shown', 'd', { view: 'intro' }), // 23:59:59 EDT
      event('2026-03-09T04:10:00Z', 'purchase', 'd'), // after midnight, inside d's conversion window
      event('2026-03-09T04:00:00Z', 'screen_shown', 'e', { view: 'intro' }), // 00:00 on the 9th
      // 2026-11-01: starts 04:00Z (EDT midnight), ends 05:00Z on the 2nd (EST midnight): 25 hours.
      event('2026-11-01T04:00:00Z', 'screen_shown', 'f', { view: 'intro' }),
      event('2026-11-01T05:30:00Z', 'screen_shown', 'g', { view: 'intro' }), // 01:30 EDT
      event('2026-11-01T06:30:00Z', 'screen_shown', 'h', { view: 'intro' }), // 01:30 EST, the repeated hour
      event('2026-11-02T04:59:59Z', 'screen_shown', 'i', { view: 'intro' }, 'iOS'), // 23:59:59 EST
      event('2026-11-02T05:00:00Z', 'screen_shown', 'j', { view: 'intro' }), // the 2nd
    ]);
  });
  afterAll(async () => {
    await warehouse.drop();
    await state.drop();
  });

  async function statusOf(day: string) {
    const { rows } = await state.pool.query<{ platform: string; events: string; hourly: number[] }>({
      text: `select platform, events, hourly from ${quoteIdent(state.schema)}.day_status where day = $1 order by platform`,
      values: [day],
    });
    return rows;
  }

  it('spring-forward day 2026-03-08 has 23 hours and keeps its own events only', async () => {
    await rollupDay(ctx, '2026-03-08');
    const [android] = await statusOf('2026-03-08');
    expect(android!.hourly).toHaveLength(23);
    expect(Number(android!.events)).toBe(4); // b's two events, c and d; nothing from the 7th or the 9th
    // Hour index counts elapsed hours since local midnight: 05:00Z -> 0, 07:30Z -> 2, 03:59:59Z (next day) -> 22.
    expect(android!.hourly[0]).toBe(2);
    expect(android!.hourly[2]).toBe(1);
    expect(android!.hourly[22]).toBe(1);
    const { rows } = await state.pool.query({
      text: `select step, reached::int from ${quoteIdent(state.schema)}.funnel_days where day = $1 and version = '*' and dimension = '' order by step`,
      values: ['2026-03-08'],
    });
    // b, c, d enter; b and d purchase (d's purchase comes after midnight, inside the window).
    expect(rows).toEqual([
      { step: 0, reached: 3 },
      { step: 1, reached: 2 },
    ]);
  });

  it('fall-back day 2026-11-01 has 25 hours, the repeated hour counted twice', async () => {
    await rollupDay(ctx, '2026-11-01');
    const rows = await statusOf('2026-11-01');
    const android = rows.find((row) => row.platform === 'android')!;
    const ios = rows.find((row) => row.platform === 'ios')!;
    expect(android.hourly).toHaveLength(25);
    expect(Number(android.events)).toBe(3);
    expect(android.hourly[1]).toBe(1); // 01:30 EDT
    expect(android.hourly[2]).toBe(1); // 01:30 EST, one elapsed hour later
    expect(ios.hourly[24]).toBe(1);
  });

  it('rerunning a day changes nothing, and a rerun after late rows replaces the day', async () => {
    const snapshot = async () => {
      const tables = ['event_days', 'param_days', 'funnel_days'];
      const out: Record<string, unknown[]> = {};
      for (const table of tables) {
        const { rows } = await state.pool.query(`select * from ${quoteIdent(state.schema)}.${table} where day = '2026-03-08' order by 1, 2, 3, 4, 5, 6, 7`);
        out[table] = rows;
      }
      const { rows } = await state.pool.query(
        `select day, platform, events, newest_at, hourly, previous_events from ${quoteIdent(state.schema)}.day_status where day = '2026-03-08' order by platform`,
      );
      out.day_status = rows;
      return out;
    };
    await rollupDay(ctx, '2026-03-08');
    const first = await snapshot();
    await rollupDay(ctx, '2026-03-08');
    expect(await snapshot()).toEqual(first);

    await warehouse.insert([event('2026-03-08T12:00:00Z', 'screen_shown', 'late', { view: 'intro' })]);
    await rollupDay(ctx, '2026-03-08');
    const after = await snapshot();
    const android = (after.day_status as Array<{ platform: string; events: string; previous_events: string }>).find((r) => r.platform === 'android')!;
    expect(Number(android.events)).toBe(5);
    expect(Number(android.previous_events)).toBe(4); // the restatement stays visible to the freshness check
    const counts = after.event_days as Array<{ event: string; version: string; dimension: string; people: string }>;
    expect(Number(counts.find((r) => r.event === 'screen_shown' && r.version === '*' && r.dimension === '')!.people)).toBe(4);
  });
});
