/**
 * Opens the configured engine behind the warehouse seam. The runtime keeps
 * the concrete type (the demo copies its generated events into ClickHouse);
 * everything that reads the warehouse sees only `Warehouse`.
 */
import type pg from 'pg';
import type { MainConfig } from '../config/schema.js';
import { ClickHouseWarehouse } from './clickhouse/index.js';
import { openEmbedded } from './clickhouse/embedded.js';
import { openServer } from './clickhouse/server.js';
import type { WarehouseMapping } from './mapping.js';
import { PostgresWarehouse } from './postgres/index.js';

export type OpenWarehouse = PostgresWarehouse | ClickHouseWarehouse;

export function openPostgresWarehouse(pool: pg.Pool, mapping: WarehouseMapping, settings: MainConfig['warehouse']): PostgresWarehouse {
  return new PostgresWarehouse(pool, mapping, { workMem: settings.work_mem, statementTimeoutSeconds: settings.statement_timeout });
}

/** A ClickHouse server when `url` is given (already resolved), the in-process engine (chdb) in `embedded_dir` otherwise. */
export async function openClickHouseWarehouse(url: string | undefined, mapping: WarehouseMapping, settings: MainConfig['warehouse']): Promise<ClickHouseWarehouse> {
  const timeoutSeconds = settings.statement_timeout;
  const connection =
    url === undefined
      ? await openEmbedded({ dataDir: settings.embedded_dir, timeoutSeconds })
      : openServer({ url, timeoutSeconds, ...(settings.tls_ca_file ? { caFile: settings.tls_ca_file } : {}) });
  return new ClickHouseWarehouse(connection, mapping);
}
