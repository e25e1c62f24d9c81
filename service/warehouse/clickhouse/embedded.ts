/**
 * The ClickHouse engine in-process, from the `chdb` npm package: for the
 * tests, the demo and a single machine without a server. chdb is about
 * 540 MB, so it is not a dependency of plumbline: it is loaded on first use,
 * with a message saying how to install it when it is missing.
 *
 * libchdb holds one data directory per process: every opening of the same
 * directory shares one session (counted, closed with the last user), and
 * opening another while one is open is refused with a message. Statements on
 * one session run one at a time.
 */
import { mkdirSync } from 'node:fs';
import { resolve } from 'node:path';
import type * as Chdb from 'chdb';
import { OUTPUT_SETTINGS, parseRows, type ClickHouseConnection } from './connection.js';
import type { ChQuery } from './sql.js';

const CHDB_INSTALL_HINT = 'the embedded ClickHouse engine needs the chdb package (about 540 MB, Linux and macOS): run `npm install chdb` in the plumbline folder';

// Types only: erased at run time, so a missing chdb fails at the dynamic import below, with the hint.
type ChdbSession = InstanceType<typeof Chdb.Session>;

let shared: { dataDir: string; session: ChdbSession; users: number } | undefined;

export async function openEmbedded(options: { dataDir: string; timeoutSeconds: number }): Promise<ClickHouseConnection> {
  const dataDir = resolve(options.dataDir);
  if (shared && shared.dataDir !== dataDir) {
    throw new Error(`the embedded ClickHouse engine already has ${shared.dataDir} open in this process; chdb holds one data directory per process`);
  }
  if (!shared) {
    const chdb = await loadChdb();
    mkdirSync(dataDir, { recursive: true });
    const settings = { ...OUTPUT_SETTINGS, max_execution_time: options.timeoutSeconds };
    const session = new chdb.Session(dataDir, { connectionArgs: Object.entries(settings).map(([name, value]) => `--${name}=${value}`) });
    shared = { dataDir, session, users: 0 };
  }
  const mine = shared;
  mine.users += 1;
  let open = true;
  return {
    kind: 'embedded',
    async query<Row>(query: ChQuery) {
      return parseRows<Row>((await mine.session.queryBindAsync(query.text, query.params, { format: 'JSONEachRow' })).text());
    },
    async command(query: ChQuery) {
      await mine.session.queryBindAsync(query.text, query.params);
    },
    async insert(table: string, rows: Array<Record<string, unknown>>) {
      if (rows.length > 0) await mine.session.insert({ table, values: rows });
    },
    async close() {
      if (!open) return;
      open = false;
      if (--mine.users === 0) {
        mine.session.close();
        shared = undefined;
      }
    },
  };
}

async function loadChdb(): Promise<typeof Chdb> {
  try {
    return await import('chdb');
  } catch (error) {
    // Missing, or its native library for this platform missing (npm --omit=optional, an unsupported system).
    throw new Error(`${CHDB_INSTALL_HINT} (${(error as Error).message.split('\n')[0]})`, { cause: error });
  }
}
