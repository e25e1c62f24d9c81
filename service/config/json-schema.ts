/**
 * JSON Schemas of the two kinds of config file, generated from the zod
 * schemas (never written by hand, so they cannot disagree with validation).
 * Editors read them to complete and check the YAML; the loader reads them to
 * know which keys a mapping allows, for "did you mean".
 */
import { z } from 'zod';
import { registry } from '../../checks/registry.js';
import type { CheckModule } from '../../checks/types.js';
import { flowSchema, mainSchema } from './schema.js';

/** File names of the generated schemas, written beside plumbline.yaml by `plumbline schema`. */
export const SCHEMA_FILES = { main: 'plumbline.schema.json', flow: 'flow.schema.json' } as const;

export interface JsonSchema {
  properties?: Record<string, JsonSchema>;
  items?: JsonSchema;
  additionalProperties?: JsonSchema | boolean;
  anyOf?: JsonSchema[];
  allOf?: JsonSchema[];
  $ref?: string;
  definitions?: Record<string, JsonSchema>;
  $defs?: Record<string, JsonSchema>;
}

/**
 * The JSON Schema of a zod schema, as config authors write it (`io: 'input'`:
 * `30m`, not seconds). Draft 7, the draft YAML editors support most widely.
 */
export function toJsonSchema(schema: z.ZodType): JsonSchema {
  return z.toJSONSchema(schema, { io: 'input', unrepresentable: 'any', target: 'draft-07' }) as JsonSchema;
}

export function configJsonSchemas(checks: readonly CheckModule[] = registry): { main: JsonSchema; flow: JsonSchema } {
  return { main: toJsonSchema(mainSchema), flow: toJsonSchema(flowSchema(checks)) };
}

/** The text of a schema file: stable, two-space indented, newline-terminated (so regenerating is diff-free). */
export function schemaText(schema: JsonSchema): string {
  return `${JSON.stringify(schema, null, 2)}\n`;
}

/** Keys the mapping at `path` allows (empty when it takes any key, like a record). */
export function knownKeys(root: JsonSchema, path: ReadonlyArray<PropertyKey>): string[] {
  let node: JsonSchema | undefined = mapping(root, root);
  for (const part of path) {
    if (!node) return [];
    if (typeof part === 'number') node = mapping(root, node.items);
    else node = mapping(root, node.properties?.[String(part)] ?? (typeof node.additionalProperties === 'object' ? node.additionalProperties : undefined));
  }
  return Object.keys(node?.properties ?? {});
}

/** Follows `$ref`s and picks the object or list branch of `anyOf` / `allOf` wrappers. */
function mapping(root: JsonSchema, node: JsonSchema | undefined): JsonSchema | undefined {
  for (let depth = 0; node && depth < 10; depth++) {
    if (node.$ref) {
      const name = node.$ref.replace(/^#\/(definitions|\$defs)\//, '');
      node = root.definitions?.[name] ?? root.$defs?.[name];
    } else {
      const branch: JsonSchema | undefined = [...(node.anyOf ?? []), ...(node.allOf ?? [])].find((option) => option.properties || option.items || option.$ref);
      if (!branch) return node;
      node = branch;
    }
  }
  return node;
}
