import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { LineCounter, isMap, isSeq, parseDocument, type Document, type Node as YamlNode } from 'yaml';
import { z } from 'zod';
import { registry } from '../../checks/registry.js';
import type { CheckModule } from '../../checks/types.js';
import {
  ConfigError,
  closest,
  describeValue,
  pathToKey,
  type ConfigProblem,
} from './problems.js';
import { flowSchema, mainSchema, type FlowConfig, type MainConfig } from './schema.js';

export const MAIN_FILE = 'plumbline.yaml';
export const FLOWS_DIR = 'flows';

export interface LoadedFlow {
  file: string;
  config: FlowConfig;
}

interface ValidatedFlow extends LoadedFlow {
  source: SourceFile;
}

export interface LoadedConfig {
  dir: string;
  main: MainConfig;
  flows: LoadedFlow[];
  /** Warnings only; errors make `loadConfig` throw. */
  warnings: ConfigProblem[];
}

/** A parsed YAML file that can say where any path in it lives. */
class SourceFile {
  readonly lines = new LineCounter();
  readonly document: Document;
  constructor(
    readonly name: string,
    text: string,
  ) {
    this.document = parseDocument(text, { lineCounter: this.lines, prettyErrors: false, uniqueKeys: true });
  }

  /** Line and column of the value at `path` (or of its key with `at: 'key'`), else of the nearest parent. */
  position(path: ReadonlyArray<PropertyKey>, at: 'key' | 'value' = 'value'): { line: number; column: number } {
    let node: unknown = this.document.contents;
    let offset = rangeStart(node) ?? 0;
    for (const part of path) {
      if (isMap(node)) {
        const pair = node.items.find((item) => scalarValue(item.key) === part);
        if (!pair) break;
        offset = (at === 'key' && part === path[path.length - 1] ? rangeStart(pair.key) : rangeStart(pair.value ?? pair.key)) ?? offset;
        node = pair.value;
      } else if (isSeq(node) && typeof part === 'number') {
        const item = node.items[part];
        if (item === undefined) break;
        offset = rangeStart(item) ?? offset;
        node = item;
      } else break;
    }
    const { line, col } = this.lines.linePos(offset);
    return { line, column: col };
  }
}

function rangeStart(node: unknown): number | undefined {
  return (node as YamlNode | undefined)?.range?.[0];
}

function scalarValue(node: unknown): unknown {
  return node !== null && typeof node === 'object' && 'value' in node ? (node as { value: unknown }).value : node;
}

/** Reads and validates `dir/plumbline.yaml` and `dir/flows/*.yaml`; throws ConfigError listing every error. */
export function loadConfig(dir: string, options: { env?: NodeJS.ProcessEnv; checks?: readonly CheckModule[] } = {}): LoadedConfig {
  const env = options.env ?? process.env;
  const checks = options.checks ?? registry;
  const problems: ConfigProblem[] = [];
  const display = (file: string) => {
    const near = relative(process.cwd(), file);
    return near === '' || near.startsWith('..') ? file : near;
  };

  const mainPath = join(dir, MAIN_FILE);
  if (!existsSync(mainPath)) {
    throw new ConfigError([
      { file: display(mainPath), line: 1, column: 1, key: '', expected: `a ${MAIN_FILE} file`, found: 'no such file', severity: 'error' },
    ]);
  }
  const main = validateFile(new SourceFile(display(mainPath), readFileSync(mainPath, 'utf8')), mainSchema, env, problems);

  const flows: ValidatedFlow[] = [];
  const flowsDir = join(dir, FLOWS_DIR);
  const flowFiles = existsSync(flowsDir)
    ? readdirSync(flowsDir)
        .filter((name) => name.endsWith('.yaml') || name.endsWith('.yml'))
        .sort()
    : [];
  const schema = flowSchema(checks);
  for (const name of flowFiles) {
    const file = display(join(flowsDir, name));
    const source = new SourceFile(file, readFileSync(join(flowsDir, name), 'utf8'));
    const config = validateFile(source, schema, env, problems);
    if (config) flows.push({ file, config, source });
  }
  if (main) crossCheck(main, flows, problems);

  const errors = problems.filter((problem) => problem.severity === 'error');
  if (errors.length > 0 || !main) throw new ConfigError(problems);
  return { dir, main, flows: flows.map(({ file, config }) => ({ file, config })), warnings: problems.filter((problem) => problem.severity === 'warning') };
}

function validateFile<S extends z.ZodType>(
  source: SourceFile,
  schema: S,
  env: NodeJS.ProcessEnv,
  problems: ConfigProblem[],
): z.output<S> | undefined {
  const file = source.name;
  if (source.document.errors.length > 0) {
    for (const error of source.document.errors) {
      const { line, col } = source.lines.linePos(error.pos[0]);
      problems.push({
        file,
        line,
        column: col,
        key: '',
        expected: 'valid YAML',
        found: error.message.split('\n')[0]!.replace(/ at line \d+, column \d+:?$/, ''),
        severity: 'error',
      });
    }
    return undefined;
  }
  const data: unknown = source.document.toJS();
  const before = problems.length;
  checkEnvironmentReferences(source, data, [], env, problems);
  const result = schema.safeParse(data, { reportInput: true });
  if (result.success) return problems.length === before ? result.data : undefined;
  const jsonSchema = z.toJSONSchema(schema, { io: 'input', unrepresentable: 'any' }) as JsonSchema;
  for (const issue of result.error.issues) problems.push(...toProblems(source, issue, jsonSchema));
  return undefined;
}

interface JsonSchema {
  properties?: Record<string, JsonSchema>;
  items?: JsonSchema;
  additionalProperties?: JsonSchema | boolean;
  anyOf?: JsonSchema[];
}

function allowedKeys(schema: JsonSchema, path: ReadonlyArray<PropertyKey>): string[] {
  let node: JsonSchema | undefined = schema;
  for (const part of path) {
    if (!node) return [];
    node = node.anyOf?.find((option) => option.properties || option.items) ?? node;
    if (typeof part === 'number') node = node.items;
    else node = node.properties?.[String(part)] ?? (typeof node.additionalProperties === 'object' ? node.additionalProperties : undefined);
  }
  node = node?.anyOf?.find((option) => option.properties) ?? node;
  return Object.keys(node?.properties ?? {});
}

function toProblems(source: SourceFile, issue: z.core.$ZodIssue, jsonSchema: JsonSchema): ConfigProblem[] {
  const path = issue.path as PropertyKey[];
  const base = { file: source.name, severity: 'error' as const };
  if (issue.code === 'unrecognized_keys') {
    const known = allowedKeys(jsonSchema, path);
    return issue.keys.map((key) => {
      const suggestion = closest(key, known);
      return {
        ...base,
        ...source.position([...path, key], 'key'),
        key: pathToKey([...path, key]),
        expected: known.length > 0 ? `one of the keys ${known.join(', ')}` : 'no such key',
        found: `unknown key "${key}"`,
        ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
      };
    });
  }
  const input = (issue as { input?: unknown }).input;
  let expected: string;
  switch (issue.code) {
    case 'invalid_type':
      expected = issue.message.startsWith('expected ') ? issue.message.slice('expected '.length) : issue.expected;
      if (input === undefined) expected = `${expected} (the key is required)`;
      break;
    case 'invalid_value':
      expected = `one of ${issue.values.map((value) => JSON.stringify(value)).join(', ')}`;
      break;
    case 'invalid_union':
      expected = issue.message.replace(/^expected /, '');
      if (expected.startsWith('Invalid input')) expected = 'a value of another form';
      break;
    default:
      expected = issue.message.replace(/^expected /, '');
  }
  return [{ ...base, ...source.position(path), key: pathToKey(path), expected, found: describeValue(input) }];
}

const REFERENCE = /\$\{([A-Za-z_][A-Za-z0-9_]*)(:-([^}]*))?\}/g;

/** Reports `${NAME}` references (without a `:-` fallback) whose variable is unset. */
function checkEnvironmentReferences(
  source: SourceFile,
  value: unknown,
  path: PropertyKey[],
  env: NodeJS.ProcessEnv,
  problems: ConfigProblem[],
): void {
  if (typeof value === 'string') {
    for (const match of value.matchAll(REFERENCE)) {
      if (match[2] === undefined && env[match[1]!] === undefined) {
        problems.push({
          file: source.name,
          ...source.position(path),
          key: pathToKey(path),
          expected: `the environment variable ${match[1]} to be set`,
          found: 'it unset',
          severity: 'error',
          hint: `or write \${${match[1]}:-} to make it optional`,
        });
      }
    }
  } else if (Array.isArray(value)) {
    value.forEach((item, index) => checkEnvironmentReferences(source, item, [...path, index], env, problems));
  } else if (value !== null && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) checkEnvironmentReferences(source, item, [...path, key], env, problems);
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

/** Problems that span files: flow ids, platforms and owners must agree with the main file. */
function crossCheck(main: MainConfig, flows: ValidatedFlow[], problems: ConfigProblem[]): void {
  const seen = new Map<string, string>();
  const platforms = Object.keys(main.warehouse.platforms);
  for (const { file, config, source } of flows) {
    const first = seen.get(config.flow);
    if (first) {
      problems.push({
        file,
        ...source.position(['flow']),
        key: 'flow',
        expected: 'a flow id used by one file only',
        found: `"${config.flow}", already defined in ${first}`,
        severity: 'error',
      });
    } else seen.set(config.flow, file);
    config.platforms.forEach((platform, index) => {
      if (!platforms.includes(platform)) {
        problems.push({
          file,
          ...source.position(['platforms', index]),
          key: `platforms[${index}]`,
          expected: `a platform mapped in ${MAIN_FILE} (${platforms.join(', ')})`,
          found: `"${platform}"`,
          severity: 'error',
        });
      }
    });
    if (config.step_time_cap > config.conversion_window) {
      problems.push({
        file,
        ...source.position(['step_time_cap']),
        key: 'step_time_cap',
        expected: 'a cap no longer than conversion_window',
        found: `${config.step_time_cap}s against a ${config.conversion_window}s window`,
        severity: 'error',
      });
    }
    if (!(config.owner in main.owners)) {
      problems.push({
        file,
        ...source.position(['owner']),
        key: 'owner',
        expected: `an owner listed under owners in ${MAIN_FILE}`,
        found: `"${config.owner}"`,
        severity: 'warning',
        hint: 'without it nobody is mentioned in chat or e-mailed the digest',
      });
    }
  }
}
