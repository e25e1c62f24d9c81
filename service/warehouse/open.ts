/**
 * Opens the configured engine behind the warehouse seam. The runtime keeps
 * the concrete type (the demo copies its generated events into ClickHouse);
 * everything that reads the warehouse sees only `Warehouse`.
 */
import type pg from 'pg';
import { ClickHouseWarehouse } from './clickhouse/index.js';
import { openEmbedded } from './clickhouse/embedded.js';
import { openServer } from './clickhouse/server.js';
import type { WarehouseMapping } from './mapping.js';
import { PostgresWarehouse } from './postgres/index.js';

export type OpenWarehouse = PostgresWarehouse | ClickHouseWarehouse;

/** The `warehouse` settings of plumbline.yaml that reach the engines. */
export interface WarehouseSettings {
  /** PostgreSQL only. */
  workMem: string;
  statementTimeoutSeconds: number;
  /** ClickHouse over https with a private certificate authority. */
  tlsCaFile?: string;
  /** ClickHouse without a URL: the in-process engine's data directory. */
  embeddedDir: string;
}

export function openPostgresWarehouse(pool: pg.Pool, mapping: WarehouseMapping, settings: WarehouseSettings): PostgresWarehouse {
  return new PostgresWarehouse(pool, mapping, { workMem: settings.workMem, statementTimeoutSeconds: settings.statementTimeoutSeconds });
}

/** A ClickHouse server when `url` is given (already resolved), the in-process engine (chdb) in `embeddedDir` otherwise. */
export async function openClickHouseWarehouse(url: string | undefined, mapping: WarehouseMapping, settings: WarehouseSettings): Promise<ClickHouseWarehouse> {
  const timeoutSeconds = settings.statementTimeoutSeconds;
  const connection =
    url === undefined
      ? await openEmbedded({ dataDir: settings.embeddedDir, timeoutSeconds })
      : openServer({ url, timeoutSeconds, ...(settings.tlsCaFile ? { caFile: settings.tlsCaFile } : {}) });
  return new ClickHouseWarehouse(connection, mapping);
}
