/**
 * The parameter profile rollup of each warehouse engine (PostgreSQL, and
 * ClickHouse in-process through chdb), on a small hand-made day: counts per key and JSON type, top
 * values in byte order on ties, distinct counts, keys whose values are not
 * grouped, number ranges and fractions; then through `rollupDay`, a key with
 * too many values on one day is no longer value-profiled on the next, and the
 * rows the checks read carry the event total.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import { migrate } from '../../service/db/migrate.js';
import { rollupDay, type RollupContext } from '../../service/rollup/rollup-day.js';
import { selectParamDays } from '../../service/state/rollups.js';
import type { ParamProfileRow } from '../../service/warehouse/engine.js';
import { LOW_CARDINALITY, TOP_VALUES, VALUE_MAX_LENGTH } from '../../service/warehouse/mapping.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { openTestWarehouse, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const TZ = 'America/New_York';
const DAY = '2026-06-10';
const NEXT = '2026-06-11';

let serial = 0;
/** One event at noon New York time (16:00Z in summer) of `day`, a second apart so rows stay distinct. */
function event(name: string, props: RawEvent['props'], platform = 'Android', version: string | null = '7.1.0', day = DAY): RawEvent {
  serial += 1;
  return { at: new Date(Date.parse(`${day}T16:00:00Z`) + serial * 1000), name, user: `u${serial}`, device: null, platform, version, props };
}

const longValue = 'x'.repeat(100);
const lines = [...Array.from({ length: 5 }, (_, i) => `L0${i + 1}`).flatMap((line) => [line, line]), ...Array.from({ length: 15 }, (_, i) => `L${String(i + 6).padStart(2, '0')}`)];

const DATASET: RawEvent[] = [
  event('purchase', { outcome: 'approved', amount_cents: 9700, tag: 'b', session: 's1' }),
  event('purchase', { outcome: 'approved', amount_cents: 4850.5, tag: 'a', session: 's2' }),
  event('purchase', { outcome: 'declined', amount_cents: null, tag: 'B', session: 's3' }),
  event('purchase', { outcome: 'declined', amount_cents: '12', tag: 'a', session: 's4' }),
  event('purchase', { outcome: true, amount_cents: -3 }),
  event('purchase', {}),
  event('purchase', { outcome: longValue }),
  event('purchase', null), // no parameters at all: counted as an event elsewhere, nothing to profile
  event('purchase', [1, 2] as unknown as Record<string, unknown>), // not an object: nothing to profile
  event('purchase', { outcome: 'approved', nested: { a: 1 }, list: [1, 2] }, 'web', null),
  event('map_view', { layer: 'lines' }), // not watched
  event('purchase', { outcome: 'approved' }, 'Android', '7.1.0', NEXT), // the next day
  ...lines.map((line) => event('scan', { line })),
  ...Array.from({ length: 60 }, (_, i) => event('scan', { ticket: `t${String(i).padStart(2, '0')}` })),
];

describe.each(TEST_ENGINES)('parameter profile rollup on %s', (engine) => {
  let warehouse: TestWarehouse;
  let state: TestSchema;
  let rows: ParamProfileRow[];
  const row = (event: string, platform: string, version: string, key: string, jsonType: string) => {
    const found = rows.find((r) => r.event === event && r.platform === platform && r.version === version && r.key === key && r.jsonType === jsonType);
    if (!found) throw new Error(`no profile row for ${event}/${platform}/${version}/${key}/${jsonType} in ${JSON.stringify(rows, null, 1)}`);
    return {
      events: found.events,
      distinct: found.distinctValues,
      min: found.minNumber,
      max: found.maxNumber,
      fractional: found.fractional,
      top: found.topValues.map((top) => [top.value, top.events]),
    };
  };

  beforeAll(async () => {
    warehouse = await openTestWarehouse(engine, 'wh');
    state = await createTestSchema('st');
    await migrate(state.pool, state.schema);
    await warehouse.insert(DATASET);
    const range = await warehouse.warehouse.dayBounds(DAY, TZ);
    rows = (await warehouse.warehouse.paramProfiles(range, ['purchase', 'scan'], ['purchase.session'])).rows;
  });
  afterAll(async () => {
    await warehouse?.drop();
    await state?.drop();
  });

  it('profiles only watched events of the day with object parameters, one row per key and JSON type', () => {
    const groups = [...new Set(rows.map((r) => `${r.event} ${r.platform} ${r.version || '(none)'} ${r.key} ${r.jsonType}`))].sort();
    expect(groups).toEqual([
      'purchase android 7.1.0 amount_cents null',
      'purchase android 7.1.0 amount_cents number',
      'purchase android 7.1.0 amount_cents string',
      'purchase android 7.1.0 outcome boolean',
      'purchase android 7.1.0 outcome string',
      'purchase android 7.1.0 session string',
      'purchase android 7.1.0 tag string',
      'purchase web (none) list array',
      'purchase web (none) nested object',
      'purchase web (none) outcome string',
      'scan android 7.1.0 line string',
      'scan android 7.1.0 ticket string',
    ]);
    expect(rows).toHaveLength(groups.length);
  });

  it('counts events, distinct values and top values, ties in byte order, long values cut', () => {
    // approved and declined tie at 2: byte order puts "approved" first; the 100-character value is cut to 64.
    expect(row('purchase', 'android', '7.1.0', 'outcome', 'string')).toMatchObject({
      events: 5,
      distinct: 3,
      top: [
        ['approved', 2],
        ['declined', 2],
        [longValue.slice(0, VALUE_MAX_LENGTH), 1],
      ],
    });
    // "B" (0x42) sorts before "b" (0x62) in byte order, whatever the server's collation says.
    expect(row('purchase', 'android', '7.1.0', 'tag', 'string').top).toEqual([
      ['a', 2],
      ['B', 1],
      ['b', 1],
    ]);
    expect(row('purchase', 'android', '7.1.0', 'outcome', 'boolean')).toMatchObject({ events: 1, distinct: 1, top: [['true', 1]] });
    expect(row('purchase', 'android', '7.1.0', 'amount_cents', 'string')).toMatchObject({ events: 1, distinct: 1, top: [['12', 1]] });
    // JSON null, objects and arrays are counted, never value-profiled.
    expect(row('purchase', 'android', '7.1.0', 'amount_cents', 'null')).toMatchObject({ events: 1, distinct: 0, top: [] });
    expect(row('purchase', 'web', '', 'nested', 'object')).toMatchObject({ events: 1, distinct: 0, top: [] });
    expect(row('purchase', 'web', '', 'list', 'array')).toMatchObject({ events: 1, distinct: 0, top: [] });
  });

  it('gives the smallest and largest number and counts numbers with a fraction', () => {
    expect(row('purchase', 'android', '7.1.0', 'amount_cents', 'number')).toEqual({
      events: 3,
      distinct: 3,
      min: -3,
      max: 9700,
      fractional: 1,
      top: [
        ['-3', 1],
        ['4850.5', 1],
        ['9700', 1],
      ],
    });
    expect(row('purchase', 'android', '7.1.0', 'outcome', 'string')).toMatchObject({ min: null, max: null, fractional: 0 });
  });

  it(`keeps the top ${TOP_VALUES} values with an exact distinct count, and lists none beyond ${LOW_CARDINALITY} distinct values`, () => {
    const line = row('scan', 'android', '7.1.0', 'line', 'string');
    expect(line.events).toBe(25);
    expect(line.distinct).toBe(20);
    expect(line.top).toEqual([...['L01', 'L02', 'L03', 'L04', 'L05'].map((v) => [v, 2]), ...['L06', 'L07', 'L08', 'L09', 'L10', 'L11', 'L12'].map((v) => [v, 1])]);
    expect(row('scan', 'android', '7.1.0', 'ticket', 'string')).toMatchObject({ events: 60, distinct: 60, top: [] });
  });

  it('counts untracked keys without grouping their values', () => {
    expect(row('purchase', 'android', '7.1.0', 'session', 'string')).toMatchObject({ events: 4, distinct: null, top: [] });
  });

  it('through rollupDay: a key with too many values stops being value-profiled, and rows carry the event total', async () => {
    const flow: FlowDefinition = {
      id: 'scan_flow',
      owner: 'team',
      steps: [
        { name: 'scan', event: 'scan', where: {} },
        { name: 'buy', event: 'purchase', where: {} },
      ],
      conversionWindowSeconds: 3600,
      stepTimeCapSeconds: 600,
      entry: 'first_step_only',
      platforms: ['web', 'android', 'ios'],
      events: ['scan', 'purchase'],
      contracts: {},
    };
    const ctx: RollupContext = { warehouse: warehouse.warehouse, state: state.pool, stateSchema: state.schema, timezone: TZ, flows: [flow] };
    await warehouse.insert(['t01', 't02', 't02'].map((ticket) => event('scan', { ticket, line: 'L01' }, 'Android', '7.1.0', NEXT)));
    await rollupDay(ctx, DAY);
    await rollupDay(ctx, NEXT);
    const { rows: stored } = await state.pool.query<{ day: string; key: string; distinctValues: number | null; topValues: unknown[]; events: number; eventTotal: number }>(
      selectParamDays(state.schema, DAY, NEXT, ['scan']),
    );
    const pick = (day: string, key: string) => stored.find((r) => r.day === day && r.key === key);
    expect(pick(DAY, 'ticket')).toMatchObject({ distinctValues: 60, topValues: [], events: 60, eventTotal: 85 });
    // 60 distinct values yesterday (more than LOW_CARDINALITY): today its values are not grouped.
    expect(pick(NEXT, 'ticket')).toMatchObject({ distinctValues: null, topValues: [], events: 3, eventTotal: 3 });
    expect(pick(NEXT, 'line')).toMatchObject({ distinctValues: 1, topValues: [{ value: 'L01', events: 3 }], events: 3, eventTotal: 3 });
  });
});
