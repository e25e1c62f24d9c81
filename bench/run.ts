/**
 * `npm run bench`: plumbline's performance figures, measured side by side in
 * one run and printed as one table (or one JSON object with `--json`).
 *
 * Each section returns named figures; add a section to `SECTIONS` to add
 * figures. Sections that need PostgreSQL share one server, chosen in this
 * order: BENCH_DATABASE_URL, TEST_DATABASE_URL, the local server at
 * postgres://postgres@127.0.0.1:5432/test when it answers, else an embedded
 * server started for the run. The output says which.
 *
 *   npm run bench -- [--json] [--only rollup,stats,backtest] [--rounds 5] [--keep] [--reuse]
 *
 * `--keep` leaves the rollup's generated tables (schemas bench_rollup_*) in
 * place and `--reuse` uses them instead of generating them again: for
 * repeated runs while working on the SQL; measurements are unaffected.
 */
import { parseArgs } from 'node:util';
import { chooseDevServer, safeUrl, type DevServer } from '../service/db/dev-server.js';
import { benchBacktest } from './backtest.js';
import { benchRollup, type Figures } from './rollup.js';
import { benchStats } from './stats.js';

interface BenchEnv {
  /** The PostgreSQL server for this run, started on first use when it is the embedded one. */
  database(): Promise<string>;
  rounds: number;
  keep: boolean;
  reuse: boolean;
  log(line: string): void;
}

interface Section {
  name: string;
  run(env: BenchEnv): Promise<Figures>;
}

const SECTIONS: Section[] = [
  {
    name: 'rollup',
    run: async (env) => benchRollup({ url: await env.database(), rounds: env.rounds, keep: env.keep, reuse: env.reuse, log: env.log }),
  },
  { name: 'stats', run: async () => benchStats() },
  { name: 'backtest', run: async (env) => benchBacktest({ url: await env.database(), rounds: Math.min(env.rounds, 3), log: env.log }) },
];

const { values: args } = parseArgs({
  options: {
    json: { type: 'boolean', default: false },
    only: { type: 'string' },
    rounds: { type: 'string', default: '5' },
    keep: { type: 'boolean', default: false },
    reuse: { type: 'boolean', default: false },
  },
});
const log = (line: string) => console.error(line);
function usage(message: string): never {
  log(`bench: ${message}`);
  process.exit(2);
}
const rounds = Number(args.rounds);
if (!Number.isInteger(rounds) || rounds < 1) usage(`--rounds must be a positive integer, got ${args.rounds}`);
const only = args.only?.split(',').map((name) => name.trim());
const unknown = only?.filter((name) => !SECTIONS.some((section) => section.name === name)) ?? [];
if (unknown.length > 0) usage(`unknown section ${unknown.join(', ')}; sections: ${SECTIONS.map((s) => s.name).join(', ')}`);

let database: DevServer | undefined;
const env: BenchEnv = {
  rounds,
  keep: args.keep,
  reuse: args.reuse,
  log,
  async database() {
    if (!database) {
      database = await chooseDevServer(['BENCH_DATABASE_URL', 'TEST_DATABASE_URL']);
      log(`bench: database: ${database.source} (${safeUrl(database.url)})`);
    }
    return database.url;
  },
};

const results: Array<{ section: string; figures: Figures }> = [];
try {
  for (const section of SECTIONS.filter((s) => !only || only.includes(s.name))) {
    log(`bench: ${section.name} ...`);
    const started = performance.now();
    const figures = await section.run(env);
    log(`bench: ${section.name} done in ${((performance.now() - started) / 1000).toFixed(0)} s`);
    results.push({ section: section.name, figures });
  }
} finally {
  await database?.stop();
}

const databaseSource = database ? database.source : 'none used';
if (args.json) {
  console.log(JSON.stringify({ database: databaseSource, sections: Object.fromEntries(results.map((r) => [r.section, r.figures])) }, null, 2));
} else {
  const rows = results.flatMap((r) => Object.entries(r.figures).map(([figure, value]) => [r.section, figure, String(value)] as const));
  const widths = [0, 1].map((i) => Math.max(...rows.map((row) => row[i]!.length), i === 0 ? 'section'.length : 'figure'.length));
  const line = (cells: readonly string[]) => cells.map((cell, i) => (i < 2 ? cell.padEnd(widths[i]!) : cell)).join('  ');
  console.log(line(['section', 'figure', 'value']));
  for (const row of rows) console.log(line(row));
  console.log(`database: ${databaseSource}`);
}
