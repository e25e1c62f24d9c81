import { join } from 'node:path';
import pg from 'pg';
import type { FlowDefinition } from '../checks/types.js';
import { toFlowDefinition, toWarehouseMapping, toWarehouseSettings } from './config/definitions.js';
import { resolveReference, type LoadedConfig } from './config/load.js';
import { startEmbeddedPostgres, type EmbeddedServer } from './db/embedded.js';
import { migrate } from './db/migrate.js';
import { poolOptions } from './db/pool-options.js';
import { createLogger, type Logger } from './log.js';
import type { WarehouseMapping } from './warehouse/mapping.js';
import type { WarehouseEngine } from './warehouse/engine.js';
import { openClickHouseWarehouse, openPostgresWarehouse, type OpenWarehouse } from './warehouse/open.js';

/** Everything a command needs to work: config, connections, logger. */
export interface Runtime {
  config: LoadedConfig;
  /** The events table's engine; the rollup, probe and freshness code see it only as the `Warehouse` seam. */
  warehouse: OpenWarehouse;
  /** plumbline's own schema, always PostgreSQL: the passes' reads and writes. */
  state: pg.Pool;
  /** The same database for the runner's claims only: each claim holds one session for a whole pass. */
  claims: pg.Pool;
  /** The same database for HTTP (pages, /readyz, /metrics), so a busy pass never starves a probe. */
  httpState: pg.Pool;
  stateSchema: string;
  mapping: WarehouseMapping;
  timezone: string;
  flows: FlowDefinition[];
  log: Logger;
  /** Set when plumbline runs its own embedded PostgreSQL (demo, or no warehouse or state database configured). */
  embedded?: EmbeddedServer;
  close(): Promise<void>;
}

/** The runtime as HTTP handlers see it: their state reads go through the HTTP pool. */
export function httpRuntime(rt: Runtime): Runtime {
  return { ...rt, state: rt.httpState };
}

export interface RuntimeOptions {
  /** Use the embedded server even when a warehouse URL is configured (the demo). */
  forceEmbedded?: boolean;
  /** The warehouse engine instead of the configured one (`plumbline demo --engine`). */
  engine?: WarehouseEngine;
  /** Where the embedded server keeps its data; `.plumbline/embedded` by default. */
  embeddedDir?: string;
  log?: Logger;
  env?: NodeJS.ProcessEnv;
  /** Connections of the state pool and of a PostgreSQL warehouse's pool, each (default 6). */
  poolSize?: number;
}

/** The daily and the digest claim, one session each. */
const CLAIM_POOL_SIZE = 2;
/** Pages and probes are short reads; a few connections serve them. */
const HTTP_POOL_SIZE = 3;

export const DEFAULT_EMBEDDED_DIR = join('.plumbline', 'embedded');

export async function openRuntime(config: LoadedConfig, options: RuntimeOptions = {}): Promise<Runtime> {
  const log = options.log ?? createLogger();
  const env = options.env ?? process.env;
  const engine = options.engine ?? config.main.warehouse.engine;
  const warehouseUrl = options.forceEmbedded ? undefined : resolveReference(config.main.warehouse.url, env);
  let stateUrl = options.forceEmbedded ? undefined : resolveReference(config.main.state.url, env);
  // The state is PostgreSQL: the warehouse's own server when that is PostgreSQL, else state.url, else an embedded one.
  if (stateUrl === undefined && engine === 'postgres') stateUrl = warehouseUrl;
  let embedded: EmbeddedServer | undefined;
  if (stateUrl === undefined) {
    const dataDir = options.embeddedDir ?? DEFAULT_EMBEDDED_DIR;
    log.info({ dataDir }, 'no database configured: starting the embedded PostgreSQL');
    embedded = await startEmbeddedPostgres({ dataDir, onLog: (line) => log.debug({ embedded: line }, 'embedded postgres') });
    stateUrl = embedded.url;
  }
  const max = options.poolSize ?? 6;
  const limits = poolOptions(config.main.connections);
  // Separate pools, even on one server: a rollup's parallel statements, a pass's claim and an HTTP probe never wait for each other's connections.
  const state = new pg.Pool({ connectionString: stateUrl, max, application_name: 'plumbline-state', ...limits });
  const claims = new pg.Pool({ connectionString: stateUrl, max: CLAIM_POOL_SIZE, application_name: 'plumbline-claim', ...limits });
  const httpState = new pg.Pool({ connectionString: stateUrl, max: HTTP_POOL_SIZE, application_name: 'plumbline-http', ...limits });
  let closing = false;
  const watch = (pool: pg.Pool) => {
    pool.on('error', (error) => {
      if (!closing) log.error({ err: error }, 'idle database connection failed');
    });
    // A connection lost while checked out emits on the client; unheard, that would end the process.
    pool.on('connect', (client) =>
      client.on('error', (error) => {
        if (!closing) log.warn({ err: error }, 'database connection lost');
      }),
    );
  };
  for (const pool of [state, claims, httpState]) watch(pool);
  const mapping = toWarehouseMapping(config.main);
  const settings = toWarehouseSettings(config.main);
  let warehouse: OpenWarehouse;
  if (engine === 'clickhouse') {
    warehouse = await openClickHouseWarehouse(warehouseUrl, mapping, settings);
  } else {
    const pool = new pg.Pool({ connectionString: warehouseUrl ?? stateUrl, max, application_name: 'plumbline-reader', ...limits });
    watch(pool);
    warehouse = openPostgresWarehouse(pool, mapping, settings);
  }
  const stateSchema = config.main.state.schema;
  const applied = await migrate(state, stateSchema);
  if (applied.length > 0) log.info({ applied, schema: stateSchema }, 'state schema migrated');
  return {
    config,
    warehouse,
    state,
    claims,
    httpState,
    stateSchema,
    mapping,
    timezone: config.main.timezone,
    flows: config.flows.map((flow) => toFlowDefinition(flow.config)),
    log,
    ...(embedded ? { embedded } : {}),
    async close() {
      closing = true;
      await warehouse.close();
      await Promise.all([state.end(), claims.end(), httpState.end()]);
      await embedded?.stop();
    },
  };
}
