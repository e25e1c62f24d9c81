/**
 * `plumbline schema [--out DIR]`: writes the JSON Schemas of plumbline.yaml
 * and of the flow files, generated from the same zod schemas `validate` uses,
 * so YAML editors complete keys and flag mistakes while the file is written.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { configJsonSchemas, SCHEMA_FILES, schemaText } from '../../config/json-schema.js';
import { EXIT } from '../exit-codes.js';

export function schemaCommand(dir: string): number {
  const schemas = configJsonSchemas();
  mkdirSync(dir, { recursive: true });
  for (const kind of ['main', 'flow'] as const) {
    const file = join(dir, SCHEMA_FILES[kind]);
    writeFileSync(file, schemaText(schemas[kind]));
    console.log(`wrote ${file}`);
  }
  return EXIT.ok;
}
