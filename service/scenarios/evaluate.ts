/**
 * `npm run evaluate`: alert quality over many generated scenarios. Each seed
 * draws an invented app (model.ts) with injected incidents and their ground
 * truth (catalogue.ts), fills its events table, runs plumbline's daily path
 * over it (replay.ts) and scores the incidents against the truth (score.ts).
 * Prints the figures and the per-type table (or JSON with --json) and writes
 * the diagnostics file. See README.md in this folder.
 *
 *   npm run evaluate -- [--seeds 20] [--from-seed 1] [--seed S] [--jobs 2] [--json]
 *                       [--dump FILE] [--compact] [--every-day] [--keep]
 *
 * Seeds CI_SEEDS are the CI test's (test/scenarios/evaluate.test.ts) and are
 * refused here: a change must raise the many-seed figures, never be tuned on
 * the seeds the floors check.
 */
import { fork } from 'node:child_process';
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { chooseDevServer, safeUrl } from '../db/dev-server.js';
import { CI_SEEDS, COMPACT, FULL_RANGE, drawScenario } from './model.js';
import type { ScenarioRun } from './replay.js';
import { formatDiagnostics, formatScore, namedFigures } from './report.js';
import { score } from './score.js';
import type { WorkerReply, WorkerRequest } from './worker.js';

const DEFAULT_DUMP = join('.plumbline', 'evaluate', 'diagnostics.md');

const { values: args } = parseArgs({
  options: {
    seeds: { type: 'string', default: '20' },
    'from-seed': { type: 'string', default: '1' },
    seed: { type: 'string' },
    jobs: { type: 'string', default: '2' },
    json: { type: 'boolean', default: false },
    dump: { type: 'string', default: DEFAULT_DUMP },
    compact: { type: 'boolean', default: false },
    'every-day': { type: 'boolean', default: false },
    keep: { type: 'boolean', default: false },
  },
});
const log = (line: string) => console.error(`evaluate: ${line}`);
function usage(message: string): never {
  log(message);
  process.exit(64);
}
const integer = (name: string, text: string, min: number) => {
  const value = Number(text);
  if (!Number.isInteger(value) || value < min) usage(`--${name} must be an integer of at least ${min}, got ${text}`);
  return value;
};
const seeds = args.seed !== undefined
  ? [integer('seed', args.seed, 0)]
  : Array.from({ length: integer('seeds', args.seeds, 1) }, (_, i) => integer('from-seed', args['from-seed'], 0) + i);
const reserved = seeds.filter((seed) => CI_SEEDS.includes(seed));
if (reserved.length > 0) usage(`seeds ${reserved.join(', ')} belong to the CI test (test/scenarios/evaluate.test.ts); evaluate on other seeds`);
const jobs = Math.min(integer('jobs', args.jobs, 1), seeds.length);
const limits = args.compact ? COMPACT : FULL_RANGE;

const started = performance.now();
const server = await chooseDevServer(['EVAL_DATABASE_URL', 'TEST_DATABASE_URL']);
log(`database: ${server.source} (${safeUrl(server.url)}); seeds ${seeds[0]}..${seeds[seeds.length - 1]}, ${jobs} at a time`);

const runs: ScenarioRun[] = [];
const failures: string[] = [];
try {
  // The largest scenarios first, so the last one to finish is a small one.
  const size = (seed: number) => {
    const plan = drawScenario(seed, limits);
    return plan.days * plan.journeysPerDay;
  };
  const queue = [...seeds].sort((a, b) => size(b) - size(a));
  const worker = join(dirname(fileURLToPath(import.meta.url)), `worker${import.meta.url.endsWith('.ts') ? '.ts' : '.js'}`);
  await Promise.all(
    Array.from({ length: jobs }, async () => {
      const child = fork(worker, [], { execArgv: ['--import', 'tsx'], stdio: ['ignore', 'inherit', 'inherit', 'ipc'] });
      try {
        for (let seed = queue.shift(); seed !== undefined; seed = queue.shift()) {
          const reply = await new Promise<Extract<WorkerReply, { seed: number }>>((resolve, reject) => {
            const onMessage = (message: WorkerReply) => {
              if ('log' in message) return log(message.log);
              child.off('message', onMessage);
              child.off('exit', onExit);
              resolve(message);
            };
            const onExit = (code: number | null) => reject(new Error(`the worker for seed ${seed} exited with ${code}`));
            child.on('message', onMessage);
            child.once('exit', onExit);
            const request: WorkerRequest = {
              seed,
              options: { url: server.url, limits, everyDay: args['every-day'], keep: args.keep },
            };
            child.send(request);
          });
          if (reply.run) runs.push(reply.run);
          else failures.push(`seed ${seed}: ${reply.error}`);
        }
      } finally {
        child.send({ stop: true } satisfies WorkerRequest);
      }
    }),
  );
} finally {
  await server.stop();
}
for (const failure of failures) log(failure);
if (runs.length === 0) process.exit(70);
runs.sort((a, b) => a.seed - b.seed);

const result = score(runs);
const minutes = (performance.now() - started) / 60_000;
await mkdir(dirname(args.dump), { recursive: true });
await writeFile(args.dump, formatDiagnostics(runs, result));
log(`${runs.length} seeds in ${minutes.toFixed(1)} min; diagnostics in ${args.dump}`);
if (args.json) {
  console.log(JSON.stringify({ seeds: runs.map((r) => r.seed), minutes: Number(minutes.toFixed(1)), figures: namedFigures(result.overall), types: result.types, failures }, null, 2));
} else {
  console.log(formatScore(result));
  console.log(`\nseeds ${runs.map((r) => r.seed).join(', ')}; ${minutes.toFixed(1)} min; database: ${server.source}`);
}
process.exit(failures.length > 0 ? 70 : 0);
