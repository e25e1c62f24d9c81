/**
 * A runner in a process of its own, for the test that kills one mid-pass:
 * reads the config and the clock from the environment, runs one daily pass.
 */
import type { LoadedConfig } from '../../service/config/load.js';
import { createLogger } from '../../service/log.js';
import { Runner } from '../../service/runner/runner.js';
import { openRuntime } from '../../service/runtime.js';

const config = JSON.parse(process.env.PLUMBLINE_TEST_CONFIG!) as LoadedConfig;
const now = new Date(process.env.PLUMBLINE_TEST_NOW!);
const rt = await openRuntime(config, { log: createLogger({ level: 'info' }), poolSize: 4 });
await new Runner(rt, { clock: () => now, claimPollMs: 20 }).daily('start');
await rt.close();
