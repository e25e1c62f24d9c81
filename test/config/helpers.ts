import { cpSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { vi } from 'vitest';
import { z } from 'zod';
import { percent, severity } from '../../checks/options.js';
import type { CheckModule } from '../../checks/types.js';
import { validateCommand, type ValidateOptions } from '../../service/cli/commands/validate.js';

/** The clock of every case: mutes ending before it have expired. */
export const TODAY = '2026-12-01';

const BASE = join(import.meta.dirname, 'fixtures', 'base');

/** Two small checks with strict option schemas, standing in for the registry so these tests do not depend on it. */
export const testChecks: CheckModule[] = [
  {
    id: 'volume',
    description: 'Daily people per event against a day-of-week expectation.',
    options: z.strictObject({ max_drop: percent().default(0.3), severity: severity('warn') }),
    messages: {},
    run: () => [],
  },
  {
    id: 'parity',
    description: "Each platform's share against its own history.",
    options: z.strictObject({ tolerance: percent().default(0.2) }),
    messages: {},
    run: () => [],
  },
];

export interface Fixture {
  /** Temporary folder holding `config/`; problems name files relative to it. */
  root: string;
  dir: string;
  outbox: string;
  remove(): void;
}

/** A file's new text (null deletes it), computed from its current text (undefined when absent). */
export type Changes = Record<string, (text: string | undefined) => string | null>;

/** Replaces `from` (which must occur exactly once, so a stale case fails loudly) by `to`. */
export function replace(from: string, to: string): (text: string | undefined) => string {
  return (text) => {
    if (text === undefined || text.split(from).length !== 2) throw new Error(`fixture: expected exactly one "${from}"`);
    return text.replace(from, to);
  };
}

export const write = (text: string) => () => text;
export const remove = () => null;

/** A copy of the base fixture (test/config/fixtures/base) with `changes` applied, in a temporary folder. */
export function brokenCopy(changes: Changes = {}): Fixture {
  const root = mkdtempSync(join(tmpdir(), 'plumbline-config-'));
  const dir = join(root, 'config');
  const outbox = join(root, 'outbox');
  cpSync(BASE, dir, { recursive: true });
  const main = join(dir, 'plumbline.yaml');
  writeFileSync(main, readFileSync(main, 'utf8').replace('OUTBOX_DIR', outbox));
  for (const [file, change] of Object.entries(changes)) {
    const path = join(dir, file);
    const before = statOrUndefined(path) ? readFileSync(path, 'utf8') : undefined;
    const after = change(before);
    if (after === null) rmSync(path);
    else writeFileSync(path, after);
  }
  return { root, dir, outbox, remove: () => rmSync(root, { recursive: true, force: true }) };
}

function statOrUndefined(path: string) {
  try {
    return statSync(path);
  } catch {
    return undefined;
  }
}

/** Every file and folder under `root` with size and modification time, to prove nothing was written. */
export function snapshot(root: string): string[] {
  const entries: string[] = [];
  const walk = (dir: string) => {
    for (const name of readdirSync(dir).sort()) {
      const path = join(dir, name);
      const stat = statSync(path);
      entries.push(`${path} ${stat.isDirectory() ? 'dir' : stat.size} ${stat.mtimeMs}`);
      if (stat.isDirectory()) walk(path);
    }
  };
  walk(root);
  return entries;
}

export interface Run {
  code: number;
  /** Everything printed on stdout, line by line. */
  lines: string[];
  errors: string[];
}

/** Runs `validate` in-process against a fixture, with the test checks, no environment and the fixed clock. */
export async function runValidate(fixture: Fixture, options: ValidateOptions = {}): Promise<Run> {
  const lines: string[] = [];
  const errors: string[] = [];
  const log = vi.spyOn(console, 'log').mockImplementation((...args: unknown[]) => void lines.push(...args.join(' ').split('\n')));
  const error = vi.spyOn(console, 'error').mockImplementation((...args: unknown[]) => void errors.push(args.join(' ')));
  try {
    const code = await validateCommand(fixture.dir, { env: {}, checks: testChecks, today: TODAY, cwd: fixture.root, ...options });
    return { code, lines, errors };
  } finally {
    log.mockRestore();
    error.mockRestore();
  }
}
