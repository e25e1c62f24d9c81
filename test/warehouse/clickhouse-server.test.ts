/**
 * A ClickHouse server, reached through `@clickhouse/client` as a team's
 * cluster would be, in a testcontainers container when a Docker engine is
 * reachable (otherwise the test says it skipped and why). The events table is
 * read by a user holding only the read-only role of deploy/README.md, and the
 * server's rows equal the PostgreSQL engine's on the same events.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toFlowDefinition } from '../../service/config/definitions.js';
import { loadConfig } from '../../service/config/load.js';
import { createClickHouseEventsQueries } from '../../service/demo/clickhouse.js';
import type { ClickHouseConnection } from '../../service/warehouse/clickhouse/connection.js';
import { ClickHouseWarehouse } from '../../service/warehouse/clickhouse/index.js';
import { openServer } from '../../service/warehouse/clickhouse/server.js';
import type { DayRange, Warehouse } from '../../service/warehouse/engine.js';
import { edgeCaseDay } from '../helpers/edge-cases.js';
import { clickHouseRow, openTestWarehouse, testMapping, type TestWarehouse } from '../helpers/warehouse.js';

const IMAGE = 'clickhouse/clickhouse-server:25.8';

async function dockerUnavailable(): Promise<string | undefined> {
  const { getContainerRuntimeClient } = await import('testcontainers');
  try {
    await getContainerRuntimeClient();
    return undefined;
  } catch (error) {
    return (error as Error).message;
  }
}

const unavailable = await dockerUnavailable();
if (unavailable) console.log(`[plumbline tests] ClickHouse server test skipped: no container runtime reachable (${unavailable})`);

describe.skipIf(unavailable !== undefined)(`a ClickHouse server (${IMAGE}) through @clickhouse/client`, () => {
  let stop: () => Promise<unknown>;
  let admin: ClickHouseConnection;
  let reader: ClickHouseConnection;
  let server: Warehouse;
  let postgres: TestWarehouse;
  let range: DayRange;
  const flows = loadConfig('config', { env: {} }).flows.map((flow) => toFlowDefinition(flow.config));
  const events = edgeCaseDay();

  beforeAll(async () => {
    const { ClickHouseContainer } = await import('@testcontainers/clickhouse');
    // Users and roles are made with SQL, as a team's administrator would.
    const container = await new ClickHouseContainer(IMAGE).withEnvironment({ CLICKHOUSE_DEFAULT_ACCESS_MANAGEMENT: '1' }).start();
    stop = () => container.stop();
    admin = openServer({ url: container.getConnectionUrl(), timeoutSeconds: 60 });
    const mapping = testMapping('analytics');
    for (const query of createClickHouseEventsQueries(mapping.table)) await admin.command(query);
    await admin.insert(mapping.table, events.map(clickHouseRow));
    // The read-only role of deploy/README.md, granted to a user of its own.
    for (const text of [
      'create role plumbline_reader',
      'grant select on analytics.events to plumbline_reader',
      "create settings profile plumbline_reader_profile settings readonly = 2, max_execution_time = 1800 to plumbline_reader",
      "create user plumbline identified with sha256_password by 'reader-secret' default role plumbline_reader",
      'grant plumbline_reader to plumbline',
    ]) {
      await admin.command({ text, params: {} });
    }
    const url = new URL(container.getConnectionUrl());
    url.username = 'plumbline';
    url.password = 'reader-secret';
    reader = openServer({ url: url.toString(), timeoutSeconds: 60 });
    server = new ClickHouseWarehouse(reader, mapping);
    postgres = await openTestWarehouse('postgres', 'server');
    await postgres.insert(events);
    range = await postgres.warehouse.dayBounds('2026-03-08', 'America/New_York');
  }, 300_000);

  afterAll(async () => {
    await reader?.close();
    await admin?.close();
    await postgres?.drop();
    await stop?.();
  });

  const sorted = <T>(rows: T[]) => [...rows].sort((a, b) => JSON.stringify(a).localeCompare(JSON.stringify(b)));

  it('gives the PostgreSQL day bounds, event counts, parameter profiles and hourly counts', async () => {
    expect(await server.dayBounds('2026-03-08', 'America/New_York')).toEqual(range);
    expect(sorted((await server.eventCounts(range, [])).rows)).toEqual(sorted((await postgres.warehouse.eventCounts(range, [])).rows));
    expect(sorted((await server.paramProfiles(range, ['screen_shown', 'pass_purchase_result'], [])).rows)).toEqual(
      sorted((await postgres.warehouse.paramProfiles(range, ['screen_shown', 'pass_purchase_result'], [])).rows),
    );
    expect(sorted(await server.hourCounts(range, ['screen_shown']))).toEqual(sorted(await postgres.warehouse.hourCounts(range, ['screen_shown'])));
  });

  it("gives the PostgreSQL funnels and step counts of the demo's flows", async () => {
    for (const flow of flows) {
      const [ours, theirs] = [await server.flow(flow, range), await postgres.warehouse.flow(flow, range)];
      expect(sorted(ours.funnel)).toEqual(sorted(theirs.funnel));
      expect(sorted(ours.steps)).toEqual(sorted(theirs.steps));
    }
  });

  it('the read-only role can read but not write', async () => {
    await expect(reader.command({ text: 'truncate table analytics.events', params: {} })).rejects.toThrow();
  });
});
