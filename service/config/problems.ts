/** One thing wrong with the configuration, positioned for a reviewer. */
export interface ConfigProblem {
  file: string;
  line: number;
  column: number;
  /** Dotted path of the key, e.g. `checks.volume.max_drop` or `steps[2].event`. */
  key: string;
  expected: string;
  found: string;
  severity: 'error' | 'warning';
  /** Extra advice, e.g. "did you mean conversion_window?". */
  hint?: string;
}

export function formatProblem(problem: ConfigProblem): string {
  const where = `${problem.file}:${problem.line}:${problem.column}`;
  const key = problem.key === '' ? '(top level)' : problem.key;
  const hint = problem.hint ? ` (${problem.hint})` : '';
  const label = problem.severity === 'warning' ? 'warning: ' : '';
  return `${where} ${label}${key}: expected ${problem.expected}, found ${problem.found}${hint}`;
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

/** How a found value reads in a message: `string "abc"`, `number 5`, `nothing`. */
export function describeValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'null';
  if (Array.isArray(value)) return `a list of ${value.length}`;
  if (typeof value === 'object') return 'a mapping';
  if (typeof value === 'string') {
    const shown = value.length > 60 ? `${value.slice(0, 57)}...` : value;
    return `string "${shown}"`;
  }
  return `${typeof value} ${String(value)}`;
}

/** Levenshtein distance, for "did you mean" suggestions on unknown keys. */
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

export function closest(word: string, candidates: Iterable<string>): string | undefined {
  let best: string | undefined;
  let bestDistance = Infinity;
  for (const candidate of candidates) {
    const distance = editDistance(word, candidate);
    if (distance < bestDistance) {
      best = candidate;
      bestDistance = distance;
    }
  }
  return best !== undefined && bestDistance <= Math.max(2, Math.floor(word.length / 3)) ? best : undefined;
}
