import { Command, CommanderError, InvalidArgumentError } from 'commander';
import { runCommand } from './commands/run.js';
import { validateCommand } from './commands/validate.js';
import { EXIT, ExitError } from './exit-codes.js';
import { withRuntime } from './with-runtime.js';

const program = new Command()
  .name('plumbline')
  .description('Watches product-analytics events daily and says when tracking or a funnel broke, where, since when and why.')
  .option('-c, --config <dir>', 'configuration folder (plumbline.yaml and flows/)', 'config')
  .showHelpAfterError()
  .exitOverride();

const configDir = () => program.opts<{ config: string }>().config;

function integer(value: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError('expected a whole number of 1 or more');
  return parsed;
}

program
  .command('validate')
  .description('check the configuration; every problem is reported with file, line and key')
  .argument('[dir]', 'configuration folder (default: --config)')
  .option('--strict', 'exit 1 when there are warnings')
  .option('--json', 'machine-readable output')
  .action((dir: string | undefined, options: { strict?: boolean; json?: boolean }) => {
    process.exitCode = validateCommand(dir ?? configDir(), options);
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
    process.exitCode = await withRuntime(configDir(), (rt) => runCommand(rt, options));
  });

// Further commands register here, one module each under service/cli/commands/.

program
  .command('serve')
  .description('run the daily schedule and serve health, readiness, metrics and the pages over HTTP')
  .option('--demo', 'serve the demo scenario from the embedded database, without a schedule')
  .option('--port <n>', 'listen on this port instead of http.port (0: any free port)', (value: string) => Number(value))
  .option('--host <address>', 'interface to listen on (default: all; 127.0.0.1 with --demo)')
  .option('--no-catch-up', 'skip the catch-up pass at start')
  .action(async (options) => {
    // Loaded on use: the scheduler, HTTP server and metrics are not needed by the one-shot commands.
    const { serveCommand } = await import('./commands/serve.js');
    process.exitCode = await serveCommand(configDir(), options);
  });

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
