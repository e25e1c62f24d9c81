#!/usr/bin/env node
// Thin launcher: the CLI is compiled to dist/ by `npm run build` (run automatically by `npm install`).
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const entry = new URL('../dist/service/cli/main.js', import.meta.url);
if (!existsSync(fileURLToPath(entry))) {
  console.error('plumbline: dist/ is missing; run `npm run build` (or `npm install`) first.');
  process.exit(70);
}
await import(entry.href);
