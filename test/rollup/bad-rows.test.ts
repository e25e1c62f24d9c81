/**
 * Rows plumbline cannot use as they are, on each warehouse engine: an empty
 * or blank user id is no user (the person falls back to the device id); and
 * the rows that once failed a whole day (a version equal to the all-versions
 * marker, a null event name, 3 KB keys over PostgreSQL's index entry limit, a
 * number beyond double precision) are counted per reason in the day's status
 * and set aside or repaired, and the day rolls up.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { rollupDay, type RollupContext } from '../../service/rollup/rollup-day.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { openTestWarehouse, TEST_ENGINES, type RawEvent, type TestWarehouse } from '../helpers/warehouse.js';

const TZ = 'UTC';
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
  platforms: ['web', 'android', 'ios'],
  events: ['screen_shown', 'purchase'],
  contracts: {},
};

function row(minute: number, fields: Partial<RawEvent> = {}): RawEvent {
  return { at: new Date(Date.parse(`${DAY}T10:00:00Z`) + minute * 60_000), name: 'screen_shown', user: null, device: null, platform: 'Android', version: '7.1.0', props: { view: 'intro' }, country: 'US', channel: 'direct', ...fields };
}

describe.each(TEST_ENGINES)('bad rows on %s', (engine) => {
  let warehouse: TestWarehouse;
  let state: TestSchema;
  let ctx: RollupContext;

  beforeAll(async () => {
    warehouse = await openTestWarehouse(engine, 'bad');
    state = await createTestSchema('badst');
    await migrate(state.pool, state.schema);
    ctx = { warehouse: warehouse.warehouse, state: state.pool, stateSchema: state.schema, timezone: TZ, flows: [flow] };
  }, 120_000);
  afterAll(async () => {
    await warehouse?.drop();
    await state?.drop();
  });

  const eventDay = async (event: string, version = '*') => {
    const { rows } = await state.pool.query<{ events: string; people: string }>({
      text: `select events, people from ${quoteIdent(state.schema)}.event_days where day = $1 and event = $2 and version = $3 and dimension = ''`,
      values: [DAY, event, version],
    });
    return rows.map((r) => ({ events: Number(r.events), people: Number(r.people) }));
  };

  it('counts an empty or blank user id as no user: 30 devices are 30 people', async () => {
    await warehouse.clear();
    const blanks = ['', ' ', '\t', ' \r\n'];
    await warehouse.insert(Array.from({ length: 30 }, (_, i) => row(i, { user: blanks[i % blanks.length]!, device: `dev-${i}` })));
    await rollupDay(ctx, DAY);
    expect(await eventDay('screen_shown')).toEqual([{ events: 30, people: 30 }]);
    const { rows } = await state.pool.query<{ entered: string }>({
      text: `select entered from ${quoteIdent(state.schema)}.funnel_days where day = $1 and version = '*' and dimension = '' and step = 0`,
      values: [DAY],
    });
    expect(rows.map((r) => Number(r.entered))).toEqual([30]);
  }, 120_000);

  it('rolls up a day holding every row that once failed it, and counts each under its reason', async () => {
    await warehouse.clear();
    const long = 'x'.repeat(3000);
    await warehouse.insert([
      row(0, { user: 'good' }),
      row(1, { user: 'star', version: '*' }),
      row(2, { user: 'nameless', name: engine === 'postgres' ? '' : (null as unknown as string) }), // the demo's PostgreSQL table refuses a null name
      row(3, { user: 'blank', name: '  ' }),
      row(4, { user: 'long-version', version: long }),
      row(5, { user: 'long-name', name: long }),
      row(6, { user: 'long-country', country: 'é'.repeat(3000) }),
      row(7, { user: 'long-key', props: { view: 'intro', [long]: 1 } }),
      row(8, { user: 'huge', propsText: '{"view": "intro", "amount": 1e400}' }),
      row(9, { user: 'tiny', propsText: '{"view": "intro", "amount": 1e-400}' }),
    ]);
    await rollupDay(ctx, DAY);
    const { rows } = await state.pool.query<{ events: string; bad_rows: Record<string, number> }>({
      text: `select events, bad_rows from ${quoteIdent(state.schema)}.day_status where day = $1 and platform = 'android'`,
      values: [DAY],
    });
    expect(rows[0]!.bad_rows).toEqual({ no_event_name: 2, reserved_version: 1, long_text: 4, unreadable_params: 1 });
    expect(Number(rows[0]!.events)).toBe(8);
    const versions = await state.pool.query<{ version: string }>({
      text: `select distinct version from ${quoteIdent(state.schema)}.event_days where day = $1 order by 1`,
      values: [DAY],
    });
    expect(versions.rows.map((r) => r.version)).toEqual(['', '*', '7.1.0', `${'x'.repeat(127)}…`]);
  }, 120_000);
});
