/**
 * Silence is not health: 120 days of Metro Pass journeys, then 40 days on
 * which the warehouse receives no event at all, then events again. The
 * silence outlasts every baseline window (the freshness profile's four weeks,
 * and `judging.history_days`, set to 30 here), yet
 * - every silent day is held back, never judged clean;
 * - it is one open data-delay incident from its first day to its last,
 *   announced at most once a day;
 * - nothing resolves during it: Android's missing rider step, open when the
 *   silence began, is still open;
 * - when events return, the baselines remember the days before the silence:
 *   the data delay resolves and Android's broken step is still seen.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createLogger } from '../../service/log.js';
import { judgeDays, replayClock, rollupRange } from '../../service/pipeline/run-day.js';
import { openRuntime, type Runtime } from '../../service/runtime.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { insertJourneys, journeyConfig } from './fixtures.js';

const DATA_FROM = '2026-03-01';
const DATA_TO = addDays(DATA_FROM, 119);
const SILENT_FROM = addDays(DATA_TO, 1);
const SILENT_TO = addDays(SILENT_FROM, 39);
const BACK_FROM = addDays(SILENT_TO, 1);
const BACK_TO = addDays(BACK_FROM, 3);
const BROKEN_FROM = addDays(DATA_TO, -4);

interface Row {
  id: string;
  causeLabel: string;
  status: string;
  since: string;
  openedDay: string;
  lastSeenDay: string;
  resolvedDay: string | null;
  platform: string | null;
}

describe('a silence longer than every baseline window', () => {
  let warehouse: TestSchema;
  let state: TestSchema;
  let rt: Runtime;

  const incidents = async () =>
    (
      await rt.state.query<Row>(
        `select id, cause_label as "causeLabel", status, to_char(since, 'YYYY-MM-DD') as since, to_char(opened_day, 'YYYY-MM-DD') as "openedDay",
          to_char(last_seen_day, 'YYYY-MM-DD') as "lastSeenDay", to_char(resolved_day, 'YYYY-MM-DD') as "resolvedDay", platform
         from ${quoteIdent(rt.stateSchema)}.incidents order by opened_day, id`,
      )
    ).rows;
  const judge = async (from: string, to: string) => {
    await rollupRange(rt, daysBetween(from, to));
    await judgeDays(rt, daysBetween(from, to), replayClock(rt));
  };

  beforeAll(async () => {
    warehouse = await createTestSchema('wh');
    state = await createTestSchema('st');
    const config = await journeyConfig(warehouse.pool, warehouse.schema, state.schema);
    config.main.judging.history_days = 30;
    await insertJourneys(warehouse.pool, warehouse.schema, { from: DATA_FROM, to: DATA_TO }, { androidWithoutRider: { from: BROKEN_FROM, to: BACK_TO } });
    await insertJourneys(warehouse.pool, warehouse.schema, { from: BACK_FROM, to: BACK_TO }, { androidWithoutRider: { from: BROKEN_FROM, to: BACK_TO } });
    rt = await openRuntime(config, { env: { PLUMBLINE_WAREHOUSE_URL: warehouse.url, PLUMBLINE_STATE_URL: warehouse.url }, log: createLogger({ level: 'error' }) });
    await judge(DATA_FROM, SILENT_TO);
  }, 300_000);

  afterAll(async () => {
    await rt?.close();
    await warehouse?.drop();
    await state?.drop();
  });

  it('holds back every silent day', async () => {
    const { rows } = await rt.state.query<{ day: string; verdict: string }>({
      text: `select to_char(day, 'YYYY-MM-DD') as day, verdict from ${quoteIdent(rt.stateSchema)}.judged_days where day >= $1 order by day`,
      values: [SILENT_FROM],
    });
    expect(rows.filter((row) => row.verdict !== 'not_ready')).toEqual([]);
    expect(rows.map((row) => row.day)).toEqual(daysBetween(SILENT_FROM, SILENT_TO));
  });

  it('is one open data-delay incident from the first silent day to the last, and resolves nothing', async () => {
    const all = await incidents();
    const delays = all.filter((i) => i.causeLabel === 'data_delay' && i.lastSeenDay >= SILENT_FROM);
    expect(delays.map((i) => [i.since, i.lastSeenDay, i.resolvedDay])).toEqual([[SILENT_FROM, SILENT_TO, null]]);
    expect(all.filter((i) => i.resolvedDay !== null && i.resolvedDay >= SILENT_FROM)).toEqual([]);
    const android = all.filter((i) => i.platform === 'android' && i.lastSeenDay >= BROKEN_FROM);
    expect(android.length).toBeGreaterThan(0);
    expect(android.every((i) => i.status !== 'resolved')).toBe(true);
  });

  it('re-announces the growing silence at most once a day', async () => {
    const [delay] = (await incidents()).filter((i) => i.causeLabel === 'data_delay' && i.lastSeenDay >= SILENT_FROM);
    const { rows } = await rt.state.query<{ event: string; day: string }>({
      text: `select event, to_char(day, 'YYYY-MM-DD') as day from ${quoteIdent(rt.stateSchema)}.outbox where incident_id = $1 order by id`,
      values: [delay!.id],
    });
    expect(new Set(rows.map((row) => row.day)).size).toBe(rows.length);
    expect(rows[0]).toEqual({ event: 'opened', day: SILENT_FROM });
    // The silence is announced again each time its length has doubled: 2, 4, 8, 16 and 32 days.
    expect(rows.slice(1)).toEqual([1, 3, 7, 15, 31].map((offset) => ({ event: 'still_held_back', day: addDays(SILENT_FROM, offset) })));
  });

  it('when events return, resolves the delay from days with data and still sees what was broken before', async () => {
    await judge(BACK_FROM, BACK_TO);
    const all = await incidents();
    const delays = all.filter((i) => i.causeLabel === 'data_delay' && i.lastSeenDay >= SILENT_FROM);
    expect(delays.map((i) => [i.since, i.lastSeenDay, i.resolvedDay])).toEqual([[SILENT_FROM, SILENT_TO, addDays(BACK_FROM, 1)]]);
    const android = all.filter((i) => i.platform === 'android' && i.lastSeenDay >= BACK_FROM);
    expect(android.length).toBeGreaterThan(0);
    expect(android.filter((i) => i.openedDay < SILENT_FROM && i.status !== 'resolved').length).toBeGreaterThan(0);
  });
});
