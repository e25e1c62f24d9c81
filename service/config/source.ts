/**
 * A YAML file as the reviewer wrote it: parsed with positions, so any path the
 * schema complains about can be pointed at (line and column, key or value),
 * and YAML's own syntax errors are reported in the same words as the rest.
 */
import { LineCounter, isAlias, isCollection, isMap, isPair, isScalar, isSeq, parseDocument, visit, type Document, type Node as YamlNode } from 'yaml';
import { pathToKey, type ConfigProblem } from './problems.js';

type Path = ReadonlyArray<PropertyKey>;

export class SourceFile {
  readonly lines = new LineCounter();
  readonly document: Document.Parsed;

  constructor(
    /** The file name shown in problems. */
    readonly name: string,
    readonly text: string,
  ) {
    this.document = parseDocument(text, { lineCounter: this.lines, prettyErrors: false, uniqueKeys: true });
  }

  /**
   * Line and column of the value at `path`, or of its key with `at: 'key'`.
   * A missing key points at its parent's key (or list item), which is where it
   * would have to be added; an empty value (`key:`) points at its key.
   */
  position(path: Path, at: 'key' | 'value' = 'value'): { line: number; column: number } {
    let node: unknown = this.document.contents;
    let offset = start(node) ?? 0;
    // Where the node reached so far is named: its key, or its list item.
    let anchor = offset;
    for (const [index, part] of path.entries()) {
      if (isAlias(node)) node = node.resolve(this.document);
      const last = index === path.length - 1;
      if (isMap(node)) {
        const pair = node.items.find((item) => String(scalarValue(item.key)) === String(part));
        if (!pair) return this.at(anchor);
        anchor = start(pair.key) ?? offset;
        const empty = pair.value === null || (isScalar(pair.value) && pair.value.value === null && pair.value.source === '');
        offset = (last && at === 'key') || empty ? anchor : (start(pair.value) ?? anchor);
        node = pair.value;
      } else if (isSeq(node) && typeof part === 'number') {
        const item = node.items[part];
        if (item === undefined) return this.at(anchor);
        offset = anchor = start(item) ?? offset;
        node = item;
      } else break;
    }
    return this.at(offset);
  }

  at(offset: number): { line: number; column: number } {
    const { line, col } = this.lines.linePos(offset);
    return { line, column: col };
  }

  /** The value at `path` as written in the file (e.g. `45m`), for messages that quote it. */
  written(path: Path): string | undefined {
    const node = this.document.getIn(path as unknown[], true);
    return isScalar(node) && node.range ? this.text.slice(node.range[0], node.range[1]).trim() : undefined;
  }

  /** The key path of the innermost key or list item whose text holds `offset`. */
  pathAt(offset: number): PropertyKey[] {
    const path: PropertyKey[] = [];
    let node: unknown = this.document.contents;
    for (;;) {
      if (isMap(node)) {
        const pair = node.items.find((item) => contains(start(item.key), end(item.value) ?? end(item.key), offset));
        if (!pair) break;
        path.push(String(scalarValue(pair.key)));
        node = pair.value;
      } else if (isSeq(node)) {
        const index = node.items.findIndex((item) => contains(start(item), end(item), offset));
        if (index === -1) break;
        path.push(index);
        node = node.items[index];
      } else break;
    }
    return path;
  }

  /**
   * The file's data, or the problem that stops reading it: an alias whose
   * anchor is missing, or so many aliases that expanding them is a hazard.
   */
  data(): { data: unknown } | { problem: ConfigProblem } {
    try {
      return { data: this.document.toJS({ maxAliasCount: 100 }) };
    } catch (error) {
      let offset = start(this.document.contents) ?? 0;
      visit(this.document, {
        Alias: (_, alias) => {
          if (alias.resolve(this.document) !== undefined) return undefined;
          offset = start(alias) ?? offset;
          return visit.BREAK;
        },
      });
      return {
        problem: {
          file: this.name,
          ...this.at(offset),
          key: pathToKey(this.pathAt(offset)),
          expected: 'valid YAML',
          found: `a YAML error: ${lowerFirst((error as Error).message)}`,
          severity: 'error',
        },
      };
    }
  }

  /**
   * YAML syntax errors as problems, at most one per line (the parser's
   * follow-on errors repeat the first), and the parser's warnings (an unknown
   * `!tag`, read as if it were absent).
   */
  syntaxProblems(): ConfigProblem[] {
    const problems: ConfigProblem[] = [];
    const lines = new Set<number>();
    for (const error of this.document.errors) {
      const problem = this.syntaxProblem(error.code, error.message, error.pos[0]);
      if (lines.has(problem.line)) continue;
      lines.add(problem.line);
      problems.push(problem);
    }
    for (const warning of this.document.warnings) {
      const offset = warning.pos[0];
      const tag = /^Unresolved tag: (.+)$/.exec(warning.message)?.[1];
      problems.push({
        file: this.name,
        ...this.at(offset),
        key: pathToKey(this.pathAt(offset)),
        expected: tag ? 'a value without a tag' : 'plain YAML',
        found: tag ? `the unknown tag ${tag}, ignored` : lowerFirst(warning.message),
        severity: 'warning',
      });
    }
    return problems;
  }

  private syntaxProblem(code: string, message: string, offset: number): ConfigProblem {
    const base = { file: this.name, severity: 'error' as const, key: pathToKey(this.pathAt(offset)), ...this.at(offset) };
    switch (code) {
      case 'DUPLICATE_KEY': {
        const duplicate = this.duplicateKeyAt(offset);
        if (!duplicate) break;
        return {
          ...base,
          key: pathToKey(duplicate.path),
          expected: 'each key once in a mapping',
          found: `"${duplicate.name}" again (first on line ${duplicate.firstLine})`,
          hint: 'YAML would silently keep only the last one',
        };
      }
      case 'TAB_AS_INDENT':
        return { ...base, expected: 'spaces for indentation', found: 'a tab character' };
      case 'MULTIPLE_DOCS':
        return { ...base, key: '', expected: 'one YAML document per file', found: 'a second document after ---' };
    }
    const closing = /end with an? ([}\]])/.exec(message)?.[1];
    const open = closing ? this.unclosedFlowBefore(offset, closing) : undefined;
    if (open) {
      return {
        ...base,
        ...this.at(start(open)!),
        key: pathToKey(this.pathAt(start(open)!)),
        expected: `a closing ${closing} on the same line as the opening ${closing === '}' ? '{' : '['} (or the next lines indented further)`,
        found: `none before line ${this.at(offset).line}`,
      };
    }
    return { ...base, expected: 'valid YAML', found: `a syntax error: ${lowerFirst(message.split('\n')[0]!)}` };
  }

  /** The duplicated key a DUPLICATE_KEY error points at, with where it first appeared. */
  private duplicateKeyAt(offset: number): { path: PropertyKey[]; name: string; firstLine: number } | undefined {
    let found: { path: PropertyKey[]; name: string; firstLine: number } | undefined;
    visit(this.document, {
      Map: (_, map, ancestors) => {
        const seen = new Map<string, number>();
        for (const pair of map.items) {
          const name = String(scalarValue(pair.key));
          const first = seen.get(name);
          if (first !== undefined && contains(start(pair.key), end(pair.key), offset)) {
            found = { path: [...this.pathOf(ancestors, map), name], name, firstLine: this.at(first).line };
            return visit.BREAK;
          }
          if (first === undefined) seen.set(name, start(pair.key) ?? 0);
        }
        return undefined;
      },
    });
    return found;
  }

  /** Key path of `node`, from the ancestors `visit` hands over. */
  private pathOf(ancestors: readonly unknown[], node: unknown): PropertyKey[] {
    const chain = [...ancestors, node];
    const path: PropertyKey[] = [];
    for (let i = 1; i < chain.length; i++) {
      const parent = chain[i - 1];
      const child = chain[i];
      if (isPair(parent) && parent.value === child) path.push(String(scalarValue(parent.key)));
      else if (isSeq(parent)) path.push(parent.items.indexOf(child as never));
    }
    return path;
  }

  /** The innermost flow collection `{ ... }` / `[ ... ]` opened before `offset` whose closing bracket is missing. */
  private unclosedFlowBefore(offset: number, closing: string): YamlNode | undefined {
    let open: YamlNode | undefined;
    visit(this.document, (_, node) => {
      if (!isCollection(node) || !node.flow || (closing === '}') !== isMap(node) || !node.range) return;
      const [from, to] = node.range;
      if (from < offset && !this.text.slice(from, to).trimEnd().endsWith(closing)) open = node;
    });
    return open;
  }
}

function start(node: unknown): number | undefined {
  return (node as YamlNode | null | undefined)?.range?.[0];
}

function end(node: unknown): number | undefined {
  return (node as YamlNode | null | undefined)?.range?.[1];
}

function contains(from: number | undefined, to: number | undefined, offset: number): boolean {
  return from !== undefined && to !== undefined && from <= offset && offset <= to;
}

function scalarValue(node: unknown): unknown {
  return isScalar(node) ? node.value : node;
}

function lowerFirst(text: string): string {
  return text.charAt(0).toLowerCase() + text.slice(1);
}
