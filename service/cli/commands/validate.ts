/**
 * `plumbline validate [dir]`: every problem of a config folder at once, as
 * `file:line:column key: expected X, found Y`. Reads files only: nothing is
 * sent or written, and no database is touched unless --against-state asks.
 */
import { inspectConfig, resolveReference, type Inspection, type LoadOptions } from '../../config/load.js';
import { compareWithObserved, namedEvents, readObserved, type Observed } from '../../config/observed.js';
import { formatProblem, sortProblems } from '../../config/problems.js';
import { EXIT } from '../exit-codes.js';

export interface ValidateOptions extends LoadOptions {
  /** Exit 1 when there are warnings and no errors. */
  strict?: boolean;
  json?: boolean;
  /** Also compare the flows' events and step parameters with the rollups in the state database. */
  againstState?: boolean;
  /** With againstState: how many rolled-up days to compare with. */
  days?: number;
}

/** Default window of --against-state: four weeks cover weekly-only events. */
export const STATE_DAYS = 28;

/** Returns the exit code; a Promise only with --against-state, the one path that does I/O beyond reading the files. */
export function validateCommand(dir: string, options: ValidateOptions & { againstState?: false }): number;
export function validateCommand(dir: string, options: ValidateOptions): number | Promise<number>;
export function validateCommand(dir: string, options: ValidateOptions): number | Promise<number> {
  const inspection = inspectConfig(dir, options);
  if (!options.againstState) return report(inspection, options);
  return againstState(inspection, options);
}

async function againstState(inspection: Inspection, options: ValidateOptions): Promise<number> {
  const { main } = inspection;
  if (!main || inspection.problems.some((problem) => problem.severity === 'error')) return report(inspection, options);
  const env = options.env ?? process.env;
  const url = resolveReference(main.config.state.url, env) ?? resolveReference(main.config.warehouse.url, env);
  if (url === undefined) {
    console.error('plumbline: --against-state needs a state database: set the variable named in state.url (or warehouse.url)');
    return EXIT.database;
  }
  const days = options.days ?? STATE_DAYS;
  let observed: Observed | undefined;
  try {
    observed = await readObserved(url, main.config.state.schema, days, namedEvents(inspection.flows));
  } catch (error) {
    console.error(`plumbline: cannot read the rollups in the state database: ${(error as Error).message}`);
    return EXIT.database;
  }
  if (!observed) {
    console.error(`plumbline: the state schema ${main.config.state.schema} has no rollups yet; events were not compared`);
    return report(inspection, options);
  }
  const problems = sortProblems([...inspection.problems, ...compareWithObserved(inspection.flows, observed)], inspection.files);
  return report({ ...inspection, problems }, options, observed);
}

function report(inspection: Inspection, options: ValidateOptions, observed?: Observed): number {
  const { name: dir, problems } = inspection;
  const errors = problems.filter((problem) => problem.severity === 'error').length;
  const warnings = problems.length - errors;
  const flows = inspection.flows.map((flow) => flow.config.flow);
  const code = errors > 0 ? EXIT.config : options.strict && warnings > 0 ? EXIT.warnings : EXIT.ok;
  if (options.json) {
    const state = observed ? { from: observed.from, to: observed.to, events: observed.events.size } : undefined;
    const listed = problems.map((problem) => ({ ...problem, text: formatProblem(problem) }));
    console.log(JSON.stringify({ dir, valid: errors === 0, errors, warnings, flows, ...(state ? { state } : {}), problems: listed }, null, 2));
    return code;
  }
  for (const problem of problems) console.log(formatProblem(problem));
  const counts = [plural(errors, 'error'), plural(warnings, 'warning')].filter((text) => !text.startsWith('0 ')).join(', ');
  const compared = observed ? `; compared with the rollups of ${observed.from} to ${observed.to}` : '';
  if (errors > 0) console.log(`${dir}: ${counts}`);
  else console.log(`${dir}: valid${counts ? ` with ${counts}` : ''} (${plural(flows.length, 'flow')}${flows.length > 0 ? `: ${flows.join(', ')}` : ''})${compared}`);
  return code;
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}
