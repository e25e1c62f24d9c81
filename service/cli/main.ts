import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { backtestCommand } from './commands/backtest.js';
import { demoCommand } from './commands/demo.js';
import { runCommand } from './commands/run.js';
import { validateCommand } from './commands/validate.js';
import { EXIT, ExitError, isDatabaseFailure } from './exit-codes.js';
import { PICTURE_DAYS } from './summary.js';
import { WAREHOUSE_ENGINES, type WarehouseEngine } from '../warehouse/engine.js';
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
  .option('--against-state', 'also compare step events, parameters and values with the rollups in the state database')
  .option('--days <n>', 'with --against-state: rolled-up days to compare with', integer, 28)
  .action(async (dir: string | undefined, options: { strict?: boolean; json?: boolean; againstState?: boolean; days: number }) => {
    process.exitCode = await validateCommand(dir ?? configDir(), options);
  });

program
  .command('run')
  .description('roll up and judge one business day (--date) or a range (--from/--to)')
  .option('--date <day>', 'the business day to run, YYYY-MM-DD')
  .option('--from <day>', 'first day of a range')
  .option('--to <day>', 'last day of a range')
  .option('--now <timestamp>', 'the clock to judge --date by, and that places the catch-up window of a range (ISO timestamp; default: now)')
  .option('--announce', 'a range queues every chat message, as the daily runs would have, instead of one summary of its days older than the catch-up window')
  .option('--days <n>', 'days shown in the day-by-day picture', integer, PICTURE_DAYS)
  .option('--findings', 'list every finding instead of one line per incident, check and platform')
  .option('--json', 'machine-readable output')
  .action(async (options) => {
    process.exitCode = await withRuntime(configDir(), (rt) => runCommand(rt, options));
  });

program
  .command('demo')
  .description('generate the Metro Pass demo scenario into an embedded database, judge every day and print the picture')
  .option('--days <n>', 'days shown in the day-by-day picture', integer, PICTURE_DAYS)
  .option('--findings', 'list every finding instead of one line per incident, check and platform')
  .option('--json', 'machine-readable output')
  .addOption(new Option('--engine <engine>', 'warehouse engine: postgres (embedded), or clickhouse (in-process chdb)').choices(WAREHOUSE_ENGINES).default('postgres'))
  .action(async (options: { json?: boolean; days: number; findings?: boolean; engine: WarehouseEngine }) => {
    process.exitCode = await withRuntime(configDir(), (rt) => demoCommand(rt, options), { forceEmbedded: true, engine: options.engine });
  });

program
  .command('backtest')
  .description('replay the checks and cause analysis over stored rollups and print what they would have raised')
  .requiredOption('--days <n>', 'days to replay, ending with the newest rolled-up day (or --to)', integer)
  .option('--to <day>', 'last day replayed, YYYY-MM-DD')
  .option('--flow <id...>', 'only these flows')
  .option('--against <ref>', 'compare with the configuration at this git revision and print a Markdown report')
  .option('--json', 'machine-readable output')
  .action(async (options: { days: number; to?: string; flow?: string[]; against?: string; json?: boolean }) => {
    process.exitCode = await withRuntime(configDir(), (rt) => backtestCommand(rt, options));
  });

program
  .command('schema')
  .description('write the JSON Schemas of plumbline.yaml and the flow files, for YAML editors to complete and check them')
  .option('--out <dir>', 'folder for plumbline.schema.json and flow.schema.json (default: --config)')
  .action(async (options: { out?: string }) => {
    const { schemaCommand } = await import('./commands/schema.js');
    process.exitCode = schemaCommand(options.out ?? configDir());
  });

// Further commands register here, one module each under service/cli/commands/.

program
  .command('digest')
  .description('preview (--out FILE.html) or send (--send) the weekly digest per owner')
  .option('--week <day>', 'any day of the week to report, YYYY-MM-DD (default: the last full week judged)')
  .option('--owner <id...>', 'only these owners')
  .option('--out <file>', 'write a browser preview of the digest(s) to this HTML file')
  .option('--send', 'send by e-mail (without delivery.email.smtp_url: write .eml and .html files to delivery.outbox_dir)')
  .option('--again', 'with --send: send even if this week was already sent')
  .action(async (options) => {
    const { digestCommand } = await import('./commands/digest.js');
    process.exitCode = await withRuntime(configDir(), (rt) => digestCommand(rt, options));
  });

program
  .command('outbox')
  .description('list chat messages not yet delivered; --retry ID queues a parked one again, --send delivers what is due')
  .option('--retry <id>', 'queue this parked message again', integer)
  .option('--send', 'deliver the messages that are due now')
  .option('--all', 'list delivered messages too')
  .option('--json', 'machine-readable output')
  .action(async (options) => {
    const { outboxCommand } = await import('./commands/outbox.js');
    process.exitCode = await withRuntime(configDir(), (rt) => outboxCommand(rt, options));
  });

program
  .command('serve')
  .description('run the daily schedule and serve health, readiness, metrics and the pages over HTTP')
  .option('--demo', 'serve the demo scenario from the embedded database, without a schedule')
  .option('--port <n>', 'listen on this port instead of http.port (0: any free port)', (value: string) => Number(value))
  .option('--host <address>', 'interface to listen on (default: http.host, 127.0.0.1)')
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
  } else if (isDatabaseFailure(error)) {
    // The databases failed, not plumbline: the documented exit 4, with the server's words.
    console.error(`plumbline: the run failed: ${(error as Error).message}`);
    process.exitCode = EXIT.failed;
  } else {
    console.error(error);
    process.exitCode = EXIT.internal;
  }
}
