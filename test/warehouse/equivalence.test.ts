/**
 * The two engines agree: the same events, generated in PostgreSQL and copied
 * into ClickHouse (in-process, chdb) the way the demo copies them, rolled up
 * day by day through each engine into its own state schema, give identical
 * rows in every rollup table (event_days, param_days, funnel_days, step_days,
 * day_status), floating-point step times and number ranges included, bit for
 * bit. The days are the demo scenario's around the 2026 fall-back day of
 * America/New_York (25 hours) and a day of edge cases on the 2026
 * spring-forward day (23 hours): ties, upgrades within the day, missing ids,
 * unmapped platforms, every JSON type, long and non-ASCII values. Day bounds
 * are also compared around every clock change of 2026 in zones whose
 * changes fall at or near midnight (IANA tz database, as both engines ship it).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toFlowDefinition } from '../../service/config/definitions.js';
import { loadConfig } from '../../service/config/load.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { copyEventsFromPostgres } from '../../service/demo/clickhouse.js';
import { DEMO_TIMEZONE, generateScenario } from '../../service/demo/scenario.js';
import { rollupDay } from '../../service/rollup/rollup-day.js';
import type { ClickHouseConnection } from '../../service/warehouse/clickhouse/connection.js';
import { ClickHouseWarehouse } from '../../service/warehouse/clickhouse/index.js';
import type { Warehouse } from '../../service/warehouse/engine.js';
import { PostgresWarehouse } from '../../service/warehouse/postgres/index.js';
import type { FlowDefinition } from '../../checks/types.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { edgeCaseDay } from '../helpers/edge-cases.js';
import { insertEvents, openTestChdb, testMapping } from '../helpers/warehouse.js';

const DAYS = ['2026-03-08', '2026-10-31', '2026-11-01', '2026-11-02'];
const TABLES = ['event_days', 'param_days', 'funnel_days', 'step_days'] as const;

describe('PostgreSQL and ClickHouse give identical rollups', () => {
  let source: TestSchema;
  let states: Record<'postgres' | 'clickhouse', TestSchema>;
  let chdb: ClickHouseConnection;
  let warehouses: Record<'postgres' | 'clickhouse', Warehouse>;
  const config = loadConfig('config', { env: {} });
  const demoFlows = config.flows.map((flow) => toFlowDefinition(flow.config));
  const monthlyPass = demoFlows.find((flow) => flow.id === 'monthly_pass')!;
  const flows: FlowDefinition[] = [
    ...demoFlows,
    { ...monthlyPass, id: 'monthly_pass_any_step', entry: 'any_step' },
    // Steps that match the same events: any screen, then the zone picker.
    { ...monthlyPass, id: 'any_screen', steps: [{ name: 'screen', event: 'screen_shown', where: {} }, ...monthlyPass.steps.slice(1)] },
  ];

  beforeAll(async () => {
    source = await createTestSchema('eq');
    await generateScenario(source.pool, { schema: source.schema, table: 'events', from: '2026-10-30', to: '2026-11-03', scale: 0.3 });
    await insertEvents(source.pool, source.schema, edgeCaseDay());
    chdb = await openTestChdb();
    const target = `${source.schema}.events`;
    await copyEventsFromPostgres(chdb, { url: source.url, table: target }, target);
    warehouses = {
      postgres: new PostgresWarehouse(source.pool, testMapping(source.schema), { workMem: '64MB', statementTimeoutSeconds: 600 }),
      clickhouse: new ClickHouseWarehouse(chdb, testMapping(source.schema)),
    };
    states = { postgres: await createTestSchema('eqpg'), clickhouse: await createTestSchema('eqch') };
    for (const engine of ['postgres', 'clickhouse'] as const) {
      await migrate(states[engine].pool, states[engine].schema);
      const ctx = { warehouse: warehouses[engine], state: states[engine].pool, stateSchema: states[engine].schema, timezone: DEMO_TIMEZONE, flows };
      for (const day of DAYS) await rollupDay(ctx, day);
    }
  }, 600_000);

  afterAll(async () => {
    await chdb?.command({ text: `drop database if exists ${quoteIdent(source.schema)}`, params: {} });
    await chdb?.close();
    await source?.drop();
    await states?.postgres.drop();
    await states?.clickhouse.drop();
  });

  /** A state table's rows in a fixed order: every column, so rows that tie on the leading ones still sort the same. */
  const rowsOf = async (engine: 'postgres' | 'clickhouse', table: string, columns = '*') => {
    const { rows } = await states[engine].pool.query(`select ${columns} from ${quoteIdent(states[engine].schema)}.${quoteIdent(table)} t order by t::text collate "C"`);
    return rows;
  };

  for (const table of TABLES) {
    it(`${table}: the same rows`, async () => {
      const postgres = await rowsOf('postgres', table);
      expect(postgres.length).toBeGreaterThan(100);
      expect(await rowsOf('clickhouse', table)).toEqual(postgres);
    });
  }

  it('day_status: the same events per platform and local hour (23 and 25 hours on DST days) and the same newest event', async () => {
    const columns = 'day, platform, events, newest_at, hourly';
    const postgres = await rowsOf('postgres', 'day_status', columns);
    expect(postgres.map((row: { hourly: number[] }) => row.hourly.length)).toEqual(expect.arrayContaining([23, 24, 25]));
    expect(await rowsOf('clickhouse', 'day_status', columns)).toEqual(postgres);
  });

  it('the late-row probe counts the same events per day and platform', async () => {
    const days = await Promise.all(DAYS.map(async (day) => ({ day, ...(await warehouses.postgres.dayBounds(day, DEMO_TIMEZONE)) })));
    const sorted = (rows: Array<{ day: string; platform: string }>) => [...rows].sort((a, b) => `${a.day}${a.platform}`.localeCompare(`${b.day}${b.platform}`));
    expect(sorted(await warehouses.clickhouse.probeCounts(days))).toEqual(sorted(await warehouses.postgres.probeCounts(days)));
  });

  it('day bounds agree around every 2026 clock change, midnight ones included', async () => {
    // Cuba and Lebanon change at midnight (a missing midnight, and one that happens twice); Lord Howe by half an hour; Chatham at 2:45.
    const zones = ['America/New_York', 'America/Havana', 'Asia/Beirut', 'Australia/Lord_Howe', 'Pacific/Chatham', 'America/Santiago', 'Europe/London', 'Asia/Kolkata'];
    for (const zone of zones) {
      const days = clockChangeDays(zone, 2026);
      for (const day of days) {
        const [postgres, clickhouse] = await Promise.all([warehouses.postgres.dayBounds(day, zone), warehouses.clickhouse.dayBounds(day, zone)]);
        expect(clickhouse, `${zone} ${day}`).toEqual(postgres);
      }
    }
  });
});

/** Days of `year` on which `zone`'s UTC offset changes, with the days either side (Intl's tz data; Asia/Kolkata has none: January 1st stands in). */
function clockChangeDays(zone: string, year: number): string[] {
  const offset = (ms: number) => {
    const parts = new Intl.DateTimeFormat('en-US', { timeZone: zone, timeZoneName: 'longOffset' }).formatToParts(new Date(ms));
    return parts.find((part) => part.type === 'timeZoneName')!.value;
  };
  const days = new Set<string>([`${year}-01-01`]);
  for (let ms = Date.UTC(year, 0, 1); ms < Date.UTC(year + 1, 0, 1); ms += 86_400_000) {
    if (offset(ms) !== offset(ms + 86_400_000)) {
      for (const shift of [-1, 0, 1, 2]) days.add(new Date(ms + shift * 86_400_000).toISOString().slice(0, 10));
    }
  }
  return [...days].sort();
}
