import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The package root (the folder holding package.json), from source or from dist/. */
function findRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json'))) {
    const parent = dirname(dir);
    if (parent === dir) throw new Error('plumbline: cannot find its package root');
    dir = parent;
  }
  return dir;
}

export const PROJECT_ROOT = findRoot();

export function projectPath(...parts: string[]): string {
  return join(PROJECT_ROOT, ...parts);
}
