/**
 * `npm run faults`: plumbline's fault suite. Each section feeds the service
 * something hostile (bad rows, malformed requests, ...) and returns named
 * figures with the target each should meet; the output is one table (or one
 * JSON object with `--json`) and the exit code is 1 when any figure misses
 * its target. Everything runs on loopback, against a PostgreSQL server chosen
 * as `npm run bench` chooses it (FAULTS_DATABASE_URL, TEST_DATABASE_URL, the
 * local server, else an embedded one), and each section bounds its own time.
 *
 *   npm run faults -- [--json] [--only hostile_rows,http]
 *
 * Sections live one a file under bench/faults/; add one to `SECTIONS`.
 */
import { parseArgs } from 'node:util';
import { chooseDevServer, safeUrl, type DevServer } from '../service/db/dev-server.js';
import { faultsDb } from './faults/db.js';
import { hostileRowsFaults } from './faults/hostile-rows.js';
import { httpFaults } from './faults/http.js';
import { faultsKill } from './faults/kill.js';
import type { FaultEnv, FaultSection } from './faults/section.js';

const SECTIONS: FaultSection[] = [hostileRowsFaults, httpFaults, faultsKill, faultsDb];

const { values: args } = parseArgs({
  options: {
    json: { type: 'boolean', default: false },
    only: { type: 'string' },
  },
});
const log = (line: string) => console.error(line);
const only = args.only?.split(',').map((name) => name.trim());
const unknown = only?.filter((name) => !SECTIONS.some((section) => section.name === name)) ?? [];
if (unknown.length > 0) {
  log(`faults: unknown section ${unknown.join(', ')}; sections: ${SECTIONS.map((s) => s.name).join(', ')}`);
  process.exit(2);
}

let database: DevServer | undefined;
const env: FaultEnv = {
  log,
  async database() {
    if (!database) {
      database = await chooseDevServer(['FAULTS_DATABASE_URL', 'TEST_DATABASE_URL']);
      log(`faults: database: ${database.source} (${safeUrl(database.url)})`);
    }
    return database.url;
  },
};

const results: Array<{ section: string; figures: Awaited<ReturnType<FaultSection['run']>> }> = [];
try {
  for (const section of SECTIONS.filter((s) => !only || only.includes(s.name))) {
    log(`faults: ${section.name} ...`);
    const started = performance.now();
    results.push({ section: section.name, figures: await section.run(env) });
    log(`faults: ${section.name} done in ${((performance.now() - started) / 1000).toFixed(0)} s`);
  }
} finally {
  await database?.stop();
}

const missed = results.flatMap((r) => r.figures.filter((f) => f.met === false).map((f) => `${r.section} ${f.name}`));
if (args.json) {
  console.log(JSON.stringify({ sections: Object.fromEntries(results.map((r) => [r.section, r.figures])), missed }, null, 2));
} else {
  const rows = results.flatMap((r) => r.figures.map((f) => [r.section, f.name, String(f.value), f.target ?? '', f.met === undefined ? '' : f.met ? 'met' : 'MISSED'] as const));
  const header = ['section', 'figure', 'value', 'target', ''] as const;
  const widths = header.map((title, i) => Math.max(title.length, ...rows.map((row) => row[i]!.length)));
  const line = (cells: readonly string[]) => cells.map((cell, i) => cell.padEnd(widths[i]!)).join('  ').trimEnd();
  console.log(line(header));
  for (const row of rows) console.log(line(row));
}
process.exitCode = missed.length > 0 ? 1 : 0;
