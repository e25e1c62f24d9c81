/** One thing wrong with the configuration, positioned for a reviewer. */
export interface ConfigProblem {
  file: string;
  line: number;
  column: number;
  /** Dotted path of the key, e.g. `checks.volume.max_drop` or `steps[2].event`; '' for the file as a whole. */
  key: string;
  expected: string;
  found: string;
  severity: 'error' | 'warning';
  /** Extra advice, e.g. "did you mean conversion_window?". */
  hint?: string;
}

/** `file:line:column key: expected X, found Y (hint)`, the form every problem is printed in. */
export function formatProblem(problem: ConfigProblem): string {
  const where = `${problem.file}:${problem.line}:${problem.column}`;
  const key = problem.key === '' ? '(file)' : problem.key;
  const hint = problem.hint ? ` (${problem.hint})` : '';
  const label = problem.severity === 'warning' ? 'warning: ' : '';
  return `${where} ${label}${key}: expected ${problem.expected}, found ${problem.found}${hint}`;
}

/** Reading order: files in the order given (the main file first), then by position within each file. */
export function sortProblems(problems: readonly ConfigProblem[], files: readonly string[]): ConfigProblem[] {
  const rank = (file: string) => {
    const index = files.indexOf(file);
    return index === -1 ? files.length : index;
  };
  return [...problems].sort((a, b) => rank(a.file) - rank(b.file) || a.file.localeCompare(b.file) || a.line - b.line || a.column - b.column);
}

export class ConfigError extends Error {
  constructor(readonly problems: ConfigProblem[]) {
    super(problems.map(formatProblem).join('\n'));
    this.name = 'ConfigError';
  }
}

export function pathToKey(path: ReadonlyArray<PropertyKey>): string {
  let key = '';
  for (const part of path) {
    if (typeof part === 'number') key += `[${part}]`;
    else key += key === '' ? String(part) : `.${String(part)}`;
  }
  return key;
}

/** How a found value reads in a message: `string "abc"`, `number 5`, `a list of 2 items`, `nothing`. */
export function describeValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'null (an empty value)';
  if (Array.isArray(value)) return value.length === 1 ? 'a list of 1 item' : `a list of ${value.length} items`;
  if (typeof value === 'object') {
    const keys = Object.keys(value);
    if (keys.length === 0) return 'an empty mapping';
    return `a mapping with the ${keys.length === 1 ? 'key' : 'keys'} ${shorten(keys.join(', '), 40)}`;
  }
  if (typeof value === 'string') return `string "${shorten(value, 60)}"`;
  return `${typeof value} ${String(value)}`;
}

function shorten(text: string, length: number): string {
  return text.length > length ? `${text.slice(0, length - 3)}...` : text;
}

/** Levenshtein distance, for "did you mean" suggestions. */
export function editDistance(a: string, b: string): number {
  const previous = Array.from({ length: b.length + 1 }, (_, i) => i);
  for (let i = 1; i <= a.length; i++) {
    let diagonal = previous[0]!;
    previous[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const above = previous[j]!;
      previous[j] = Math.min(above + 1, previous[j - 1]! + 1, diagonal + (a[i - 1] === b[j - 1] ? 0 : 1));
      diagonal = above;
    }
  }
  return previous[b.length]!;
}

/**
 * The candidate nearest to `word` (case-insensitive), when it is near enough to
 * be a likely typo, or the one candidate that starts with it (a shortened name).
 */
export function closest(word: string, candidates: Iterable<string>): string | undefined {
  let best: string | undefined;
  let bestDistance = Infinity;
  const extending: string[] = [];
  for (const candidate of candidates) {
    if (word.length >= 3 && candidate.startsWith(word) && candidate !== word) extending.push(candidate);
    if (candidate === word) continue;
    const distance = editDistance(word.toLowerCase(), candidate.toLowerCase());
    if (distance < bestDistance) {
      best = candidate;
      bestDistance = distance;
    }
  }
  if (best !== undefined && bestDistance <= Math.max(1, Math.floor(word.length / 3))) return best;
  return extending.length === 1 ? extending[0] : undefined;
}

/** `a`, `a or b`, `a, b or c`. */
export function orList(items: readonly string[]): string {
  return items.length <= 1 ? (items[0] ?? '') : `${items.slice(0, -1).join(', ')} or ${items[items.length - 1]}`;
}
