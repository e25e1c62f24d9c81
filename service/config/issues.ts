/**
 * zod issues in the reviewer's words: `expected X, found Y` at the key or
 * value the issue is about. zod's own messages ("Invalid input: expected int,
 * received number") are replaced; messages written in the schemas (they start
 * with "expected") are kept.
 */
import type { z } from 'zod';
import { knownKeys, type JsonSchema } from './json-schema.js';
import { closest, describeValue, orList, pathToKey, type ConfigProblem } from './problems.js';
import { RENAMED_KEYS, SECRET_REFERENCE } from './schema.js';
import type { SourceFile } from './source.js';

type Issue = z.core.$ZodIssue;

/** zod's built-in messages all start like this; anything else was written in a schema. */
const BUILT_IN = /^(Invalid|Too (small|big)|Unrecognized)/;

const NOUNS: Record<string, string> = {
  string: 'a string',
  number: 'a number',
  int: 'a whole number',
  boolean: 'true or false',
  object: 'a mapping',
  record: 'a mapping',
  array: 'a list',
  null: 'null',
};

/**
 * Every issue of one file as problems. A required key reported missing next to
 * an unknown key that is a typo of it ("evnt" for "event") is one mistake, so
 * only the unknown key is reported, with its "did you mean".
 */
export function issuesToProblems(source: SourceFile, issues: readonly Issue[], schema: JsonSchema): ConfigProblem[] {
  const problems = issues.flatMap((issue) => issueProblems(source, issue, schema));
  const misspelt = new Set(
    problems.flatMap((problem) => {
      const meant = /did you mean (.+)\?$/.exec(problem.hint ?? '')?.[1];
      return problem.found.startsWith('unknown key') && meant ? [problem.key.replace(/[^.\]]+$/, meant)] : [];
    }),
  );
  return problems.filter((problem) => !(problem.found === 'nothing' && misspelt.has(problem.key)));
}

function issueProblems(source: SourceFile, issue: Issue, schema: JsonSchema): ConfigProblem[] {
  const path = issue.path as PropertyKey[];
  const base = { file: source.name, severity: 'error' as const };
  if (issue.code === 'unrecognized_keys') {
    const known = knownKeys(schema, path);
    return issue.keys.map((key) => {
      const renamed = RENAMED_KEYS[pathToKey([...path, key])];
      const suggestion = renamed ?? closest(key, known);
      return {
        ...base,
        ...source.position([...path, key], 'key'),
        key: pathToKey([...path, key]),
        expected: known.length > 0 ? `one of the keys ${known.join(', ')}` : 'no keys here',
        found: `unknown key "${key}"`,
        ...(suggestion ? { hint: `${renamed ? 'renamed: ' : ''}did you mean ${suggestion}?` } : {}),
      };
    });
  }
  if (issue.code === 'invalid_key') {
    return [
      {
        ...base,
        ...source.position(path, 'key'),
        key: pathToKey(path),
        expected: issue.issues[0] ? expectedOf(issue.issues[0]) : 'another key',
        found: `key "${String(path[path.length - 1])}"`,
      },
    ];
  }
  const input = (issue as { input?: unknown }).input;
  const params = (issue as { params?: { found?: string; hint?: string } }).params;
  let expected = path.length === 0 && issue.code === 'invalid_type' ? 'a mapping of keys (key: value lines)' : expectedOf(issue);
  if (input === undefined && !expected.includes('required')) expected += ' (required)';
  const hint = params?.hint ?? suggestionFor(issue, input);
  return [
    {
      ...base,
      ...source.position(path),
      key: pathToKey(path),
      expected,
      found: params?.found ?? foundOf(issue, input, path),
      ...(hint ? { hint } : {}),
    },
  ];
}

function expectedOf(issue: Issue): string {
  if (!BUILT_IN.test(issue.message)) return issue.message.replace(/^expected /, '');
  switch (issue.code) {
    case 'invalid_type':
      return NOUNS[issue.expected] ?? issue.expected;
    case 'invalid_value':
      return issue.values.length === 1 ? JSON.stringify(issue.values[0]) : `one of ${issue.values.map((value) => JSON.stringify(value)).join(', ')}`;
    case 'invalid_union':
      return unionExpected(issue);
    case 'too_small':
    case 'too_big':
      return boundExpected(issue);
    case 'invalid_format':
      if (issue.format === 'url') return 'a URL such as https://plumbline.metropass.example';
      if (issue.format === 'email') return 'an e-mail address';
      return `text matching ${issue.pattern ?? issue.format}`;
    case 'not_multiple_of':
      return `a multiple of ${String(issue.divisor)}`;
    default:
      return issue.message;
  }
}

/** A union's branches in one phrase, nested unions flattened: "a string, a number, true or false or a list". */
function unionExpected(issue: Extract<Issue, { code: 'invalid_union' }>): string {
  const nouns = unionNouns(issue);
  return nouns ? orList([...new Set(nouns)]) : 'a value of another form';
}

function unionNouns(issue: Extract<Issue, { code: 'invalid_union' }>): string[] | undefined {
  const nouns: string[] = [];
  for (const branch of issue.errors) {
    const only = branch.length === 1 && branch[0]!.path.length === 0 ? branch[0]! : undefined;
    if (!only) return undefined;
    const nested = only.code === 'invalid_union' && BUILT_IN.test(only.message) ? unionNouns(only) : [expectedOf(only)];
    if (!nested) return undefined;
    nouns.push(...nested);
  }
  return nouns.length > 0 ? nouns : undefined;
}

function boundExpected(issue: Extract<Issue, { code: 'too_small' | 'too_big' }>): string {
  const limit = Number(issue.code === 'too_small' ? issue.minimum : issue.maximum);
  const small = issue.code === 'too_small';
  const relation = issue.inclusive ? (small ? 'at least' : 'at most') : small ? 'more than' : 'less than';
  switch (issue.origin) {
    case 'string':
      return small && limit === 1 ? 'a non-empty string' : `a string of ${relation} ${limit} characters`;
    case 'array':
    case 'set':
      return `a list of ${relation} ${limit} ${limit === 1 ? 'item' : 'items'}`;
    default:
      return `a number ${relation} ${limit}`;
  }
}

function foundOf(issue: Issue, input: unknown, path: readonly PropertyKey[]): string {
  // The value of a key that must be an ${ENV} reference is a connection string or a token: never print it.
  if (issue.code === 'invalid_format' && issue.format === 'regex' && issue.pattern === String(SECRET_REFERENCE) && typeof input === 'string') {
    return 'a literal value (not shown: it may hold a secret)';
  }
  if (path.length === 0) {
    if (input === null || input === undefined) return 'an empty file';
    if (Array.isArray(input)) return `a list of ${input.length} ${input.length === 1 ? 'item' : 'items'} (- lines)`;
  }
  return describeValue(input);
}

/** "did you mean" for a value that is one letter off an allowed one; a quoted number is one unquoting away. */
function suggestionFor(issue: Issue, input: unknown): string | undefined {
  if (issue.code === 'invalid_type' && (issue.expected === 'number' || issue.expected === 'int') && typeof input === 'string' && /^-?\d+(\.\d+)?$/.test(input)) {
    return 'write the number without quotes';
  }
  if (issue.code !== 'invalid_value' || typeof input !== 'string') return undefined;
  const suggestion = closest(
    input,
    issue.values.filter((value): value is string => typeof value === 'string'),
  );
  return suggestion ? `did you mean ${suggestion}?` : undefined;
}
