import { join } from 'node:path';
import pg from 'pg';
import type { FlowDefinition } from '../checks/types.js';
import { toFlowDefinition, toWarehouseMapping } from './config/definitions.js';
import { resolveReference, type LoadedConfig } from './config/load.js';
import { startEmbeddedPostgres, type EmbeddedServer } from './db/embedded.js';
import { migrate } from './db/migrate.js';
import { createLogger, type Logger } from './log.js';
import type { WarehouseMapping } from './warehouse/queries.js';

/** Everything a command needs to work: config, connections, logger. */
export interface Runtime {
  config: LoadedConfig;
  warehouse: pg.Pool;
  state: pg.Pool;
  stateSchema: string;
  mapping: WarehouseMapping;
  timezone: string;
  flows: FlowDefinition[];
  log: Logger;
  /** Set when plumbline runs its own embedded PostgreSQL (demo, or no warehouse configured). */
  embedded?: EmbeddedServer;
  close(): Promise<void>;
}

export interface RuntimeOptions {
  /** Use the embedded server even when a warehouse URL is configured (the demo). */
  forceEmbedded?: boolean;
  /** Where the embedded server keeps its data; `.plumbline/embedded` by default. */
  embeddedDir?: string;
  log?: Logger;
  env?: NodeJS.ProcessEnv;
  poolSize?: number;
}

export const DEFAULT_EMBEDDED_DIR = join('.plumbline', 'embedded');

export async function openRuntime(config: LoadedConfig, options: RuntimeOptions = {}): Promise<Runtime> {
  const log = options.log ?? createLogger();
  const env = options.env ?? process.env;
  let warehouseUrl = options.forceEmbedded ? undefined : resolveReference(config.main.warehouse.url, env);
  let stateUrl = options.forceEmbedded ? undefined : resolveReference(config.main.state.url, env);
  let embedded: EmbeddedServer | undefined;
  if (warehouseUrl === undefined) {
    const dataDir = options.embeddedDir ?? DEFAULT_EMBEDDED_DIR;
    log.info({ dataDir }, 'no warehouse configured: starting the embedded PostgreSQL');
    embedded = await startEmbeddedPostgres({ dataDir, onLog: (line) => log.debug({ embedded: line }, 'embedded postgres') });
    warehouseUrl = embedded.url;
    stateUrl = stateUrl ?? embedded.url;
  }
  const max = options.poolSize ?? 6;
  const warehouse = new pg.Pool({ connectionString: warehouseUrl, max, application_name: 'plumbline-reader' });
  const state = stateUrl === undefined || stateUrl === warehouseUrl ? warehouse : new pg.Pool({ connectionString: stateUrl, max, application_name: 'plumbline-state' });
  let closing = false;
  for (const pool of new Set([warehouse, state])) {
    pool.on('error', (error) => {
      if (!closing) log.error({ err: error }, 'idle database connection failed');
    });
    // A connection lost while checked out emits on the client; unheard, that would end the process.
    pool.on('connect', (client) =>
      client.on('error', (error) => {
        if (!closing) log.warn({ err: error }, 'database connection lost');
      }),
    );
  }
  const stateSchema = config.main.state.schema;
  const applied = await migrate(state, stateSchema);
  if (applied.length > 0) log.info({ applied, schema: stateSchema }, 'state schema migrated');
  return {
    config,
    warehouse,
    state,
    stateSchema,
    mapping: toWarehouseMapping(config.main),
    timezone: config.main.timezone,
    flows: config.flows.map((flow) => toFlowDefinition(flow.config)),
    log,
    ...(embedded ? { embedded } : {}),
    async close() {
      closing = true;
      await warehouse.end();
      if (state !== warehouse) await state.end();
      await embedded?.stop();
    },
  };
}
