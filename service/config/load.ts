import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { z } from 'zod';
import { registry } from '../../checks/registry.js';
import type { CheckModule } from '../../checks/types.js';
import { checkFlowIds, crossCheck, type Checked } from './cross-check.js';
import { issuesToProblems } from './issues.js';
import { toJsonSchema } from './json-schema.js';
import { ConfigError, pathToKey, sortProblems, type ConfigProblem } from './problems.js';
import { flowSchema, mainSchema, REFERENCE_KEYS, type FlowConfig, type MainConfig } from './schema.js';
import { SourceFile } from './source.js';

export const MAIN_FILE = 'plumbline.yaml';
export const FLOWS_DIR = 'flows';

export interface LoadedFlow {
  file: string;
  config: FlowConfig;
}

export interface LoadedConfig {
  dir: string;
  main: MainConfig;
  flows: LoadedFlow[];
  /** Warnings only; errors make `loadConfig` throw. */
  warnings: ConfigProblem[];
}

export interface LoadOptions {
  env?: NodeJS.ProcessEnv;
  checks?: readonly CheckModule[];
  /** Today in the business timezone, YYYY-MM-DD, for mutes that have ended (default: from the clock). */
  today?: string;
  /** Files inside this folder are named relative to it in problems (default: the working directory). */
  cwd?: string;
}

/** Everything validation learned about a config folder; nothing in it throws. */
export interface Inspection {
  /** The folder as problems name it (relative to the working directory when inside it). */
  name: string;
  /** Names of the files read, main first: the order problems are listed in. */
  files: string[];
  /** Absent when plumbline.yaml is missing or invalid. */
  main?: Checked<MainConfig>;
  /** The flow files that passed their schema. */
  flows: Array<Checked<FlowConfig> & { file: string }>;
  problems: ConfigProblem[];
}

/** Reads and validates `dir/plumbline.yaml` and `dir/flows/*.yaml`; throws ConfigError listing every problem when any is an error. */
export function loadConfig(dir: string, options: LoadOptions = {}): LoadedConfig {
  const inspection = inspectConfig(dir, options);
  if (!inspection.main || inspection.problems.some((problem) => problem.severity === 'error')) throw new ConfigError(inspection.problems);
  return {
    dir,
    main: inspection.main.config,
    flows: inspection.flows.map(({ file, config }) => ({ file, config })),
    warnings: inspection.problems,
  };
}

/** Validates a config folder and reports every problem at once: YAML syntax, schemas, environment references, cross-file rules. */
export function inspectConfig(dir: string, options: LoadOptions = {}): Inspection {
  const env = options.env ?? process.env;
  const checks = options.checks ?? registry;
  const base = resolve(options.cwd ?? process.cwd());
  const display = (file: string) => {
    const near = relative(base, resolve(file));
    return near === '' || near.startsWith('..') ? file : near;
  };
  const problems: ConfigProblem[] = [];
  const files: string[] = [];

  const mainPath = join(dir, MAIN_FILE);
  let main: Checked<MainConfig> | undefined;
  let mainPart: Checked<Partial<MainConfig>> | undefined;
  if (existsSync(mainPath)) {
    const source = new SourceFile(display(mainPath), readFileSync(mainPath, 'utf8'));
    files.push(source.name);
    const { config, partial } = validateFile(source, mainSchema, REFERENCE_KEYS, env, problems);
    if (config) main = { source, config };
    if (partial) mainPart = { source, config: partial };
  } else {
    files.push(display(mainPath));
    problems.push({ file: display(mainPath), line: 1, column: 1, key: '', expected: `a ${MAIN_FILE} file`, found: 'no such file', severity: 'error' });
  }

  const flowsDir = join(dir, FLOWS_DIR);
  const flowFiles = existsSync(flowsDir) && statSync(flowsDir).isDirectory()
    ? readdirSync(flowsDir).filter((name) => /\.ya?ml$/.test(name)).sort()
    : [];
  const schema = flowSchema(checks);
  const flows: Inspection['flows'] = [];
  const parts: Array<Checked<Partial<FlowConfig>>> = [];
  const raw: Array<{ source: SourceFile; data: unknown }> = [];
  for (const name of flowFiles) {
    const source = new SourceFile(display(join(flowsDir, name)), readFileSync(join(flowsDir, name), 'utf8'));
    files.push(source.name);
    const { data, config, partial } = validateFile(source, schema, [], env, problems);
    raw.push({ source, data });
    if (config) flows.push({ file: source.name, source, config });
    if (partial) parts.push({ source, config: partial });
  }
  const context = { checks, today: options.today ?? today(mainPart?.config.timezone) };
  problems.push(...checkFlowIds(raw), ...crossCheck(mainPart, parts, context));
  return { name: display(dir), files, ...(main ? { main } : {}), flows, problems: sortProblems(problems, files) };
}

/** Today's date in the business timezone, YYYY-MM-DD. */
function today(timeZone = 'UTC'): string {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(new Date());
  const part = (type: string) => parts.find((p) => p.type === type)!.value;
  return `${part('year')}-${part('month')}-${part('day')}`;
}

/**
 * One file through YAML, environment references and its schema. A YAML syntax
 * error stops there (the data would be a guess); a duplicate key does not, as
 * YAML's reading of it (the last one wins) is still worth checking.
 */
function validateFile<S extends z.ZodType>(
  source: SourceFile,
  schema: S,
  referenceKeys: readonly string[],
  env: NodeJS.ProcessEnv,
  problems: ConfigProblem[],
): { data?: unknown; config?: z.output<S>; partial?: Partial<z.output<S>> } {
  problems.push(...source.syntaxProblems());
  if (source.document.errors.some((error) => error.code !== 'DUPLICATE_KEY')) return {};
  const read = source.data();
  if ('problem' in read) {
    problems.push(read.problem);
    return {};
  }
  const before = problems.length;
  checkReferences(source, read.data, [], referenceKeys, env, problems);
  const result = schema.safeParse(read.data, { reportInput: true });
  if (!result.success) {
    problems.push(...issuesToProblems(source, result.error.issues, toJsonSchema(schema)));
    return { data: read.data, partial: salvage(schema, read.data) };
  }
  const failed = problems.slice(before).some((problem) => problem.severity === 'error') || source.document.errors.length > 0;
  return { data: read.data, partial: result.data, ...(failed ? {} : { config: result.data }) };
}

/** The top-level keys of an invalid file that are valid on their own, for the cross-file rules. */
function salvage<S extends z.ZodType>(schema: S, data: unknown): Partial<z.output<S>> {
  const partial: Record<string, unknown> = {};
  if (!(schema instanceof z.ZodObject) || data === null || typeof data !== 'object' || Array.isArray(data)) return partial as Partial<z.output<S>>;
  for (const [key, field] of Object.entries(schema.shape as Record<string, z.ZodType>)) {
    const result = field.safeParse((data as Record<string, unknown>)[key]);
    if (result.success) partial[key] = result.data;
  }
  return partial as Partial<z.output<S>>;
}

const REFERENCE = /\$\{([A-Za-z_][A-Za-z0-9_]*)(:-([^}]*))?\}/g;

/**
 * `${NAME}` references: in the keys read from the environment, the variable
 * must be set unless a `:-` fallback is given; anywhere else a reference is
 * never replaced, so it is flagged before it reaches a message as written.
 */
function checkReferences(
  source: SourceFile,
  value: unknown,
  path: PropertyKey[],
  referenceKeys: readonly string[],
  env: NodeJS.ProcessEnv,
  problems: ConfigProblem[],
): void {
  if (typeof value === 'string') {
    const key = pathToKey(path);
    for (const match of value.matchAll(REFERENCE)) {
      if (!referenceKeys.includes(key)) {
        problems.push({
          file: source.name,
          ...source.position(path),
          key,
          expected: `plain text (\${ENV} references are read only in ${REFERENCE_KEYS.join(', ')})`,
          found: `"${match[0]}", which would be used as written`,
          severity: 'warning',
        });
        return;
      }
      if (match[2] === undefined && env[match[1]!] === undefined) {
        problems.push({
          file: source.name,
          ...source.position(path),
          key,
          expected: `the environment variable ${match[1]} to be set`,
          found: 'it unset',
          severity: 'error',
          hint: `or write \${${match[1]}:-} to make it optional`,
        });
      }
    }
  } else if (Array.isArray(value)) {
    value.forEach((item, index) => checkReferences(source, item, [...path, index], referenceKeys, env, problems));
  } else if (value !== null && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) checkReferences(source, item, [...path, key], referenceKeys, env, problems);
  }
}

/** Resolves a `${NAME}` / `${NAME:-fallback}` reference at the moment of use; undefined when empty. */
export function resolveReference(reference: string | undefined, env: NodeJS.ProcessEnv = process.env): string | undefined {
  if (reference === undefined) return undefined;
  const resolved = reference.replace(REFERENCE, (_, name: string, fallback?: string, fallbackValue?: string) =>
    env[name] ?? (fallback !== undefined ? (fallbackValue ?? '') : ''),
  );
  return resolved === '' ? undefined : resolved;
}
