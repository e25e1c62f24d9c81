import { Command, CommanderError, InvalidArgumentError } from 'commander';
import { loadConfig } from '../config/load.js';
import { ConfigError, formatProblem } from '../config/problems.js';
import { createLogger } from '../log.js';
import { openRuntime, type Runtime } from '../runtime.js';
import { runCommand } from './commands/run.js';
import { validateCommand } from './commands/validate.js';
import { EXIT, ExitError } from './exit-codes.js';

const program = new Command()
  .name('plumbline')
  .description('Watches product-analytics events daily and says when tracking or a funnel broke, where, since when and why.')
  .option('-c, --config <dir>', 'configuration folder (plumbline.yaml and flows/)', 'config')
  .showHelpAfterError()
  .exitOverride();

function integer(value: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError('expected a whole number of 1 or more');
  return parsed;
}

/** Loads the config (exit 2 on errors) and opens the connections (exit 3 when that fails). */
async function withRuntime(work: (rt: Runtime) => Promise<number>, options: { forceEmbedded?: boolean } = {}): Promise<number> {
  const dir = program.opts<{ config: string }>().config;
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
  const log = createLogger({ level: process.env.PLUMBLINE_LOG_LEVEL ?? 'warn' });
  let rt: Runtime;
  try {
    rt = await openRuntime(config, { log, ...options });
  } catch (error) {
    log.error({ err: error }, 'cannot open the databases');
    console.error(`plumbline: cannot open the databases: ${(error as Error).message}`);
    return EXIT.database;
  }
  try {
    return await work(rt);
  } finally {
    await rt.close();
  }
}

program
  .command('validate')
  .description('check the configuration; every problem is reported with file, line and key')
  .argument('[dir]', 'configuration folder (default: --config)')
  .option('--strict', 'exit 1 when there are warnings')
  .option('--json', 'machine-readable output')
  .action((dir: string | undefined, options: { strict?: boolean; json?: boolean }) => {
    process.exitCode = validateCommand(dir ?? program.opts<{ config: string }>().config, options);
  });

program
  .command('run')
  .description('roll up and judge one business day (--date) or a range (--from/--to)')
  .option('--date <day>', 'the business day to run, YYYY-MM-DD')
  .option('--from <day>', 'first day of a range')
  .option('--to <day>', 'last day of a range')
  .option('--now <timestamp>', 'the clock to judge --date by (ISO timestamp; default: now)')
  .option('--days <n>', 'days shown in the day-by-day picture', integer, 14)
  .option('--json', 'machine-readable output')
  .action(async (options) => {
    process.exitCode = await withRuntime((rt) => runCommand(rt, options));
  });

// Further commands register here, one module each under service/cli/commands/.

try {
  await program.parseAsync(process.argv);
} catch (error) {
  if (error instanceof CommanderError) {
    process.exitCode = error.exitCode === 0 ? EXIT.ok : EXIT.usage;
  } else if (error instanceof ExitError) {
    console.error(`plumbline: ${error.message}`);
    process.exitCode = error.code;
  } else {
    console.error(error);
    process.exitCode = EXIT.internal;
  }
}
