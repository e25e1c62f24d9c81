/**
 * The JSON Schemas editors use: the committed files must be exactly what
 * `plumbline schema` generates now (so they never drift from validation), and
 * a JSON Schema validator must accept the demo files and flag typical mistakes
 * the way an editor would.
 */
import { readdirSync, readFileSync } from 'node:fs';
import Ajv from 'ajv';
import { parse } from 'yaml';
import { describe, expect, it } from 'vitest';
import { configJsonSchemas, SCHEMA_FILES, schemaText, type JsonSchema } from '../../service/config/json-schema.js';
import { projectPath } from '../../service/paths.js';
import { testChecks } from './helpers.js';

const STALE = 'config/*.schema.json are stale: run `npm run dev -- schema` and commit the result';

describe('committed JSON Schemas', () => {
  const generated = configJsonSchemas();
  it.each(['main', 'flow'] as const)('%s schema matches the zod schemas and the registered checks', (kind) => {
    const committed = readFileSync(projectPath('config', SCHEMA_FILES[kind]), 'utf8');
    expect(committed, STALE).toBe(schemaText(generated[kind]));
  });
});

describe('what an editor sees', () => {
  // Draft 7 is what the generated schemas declare; ajv 6 (already installed with eslint) implements it.
  const ajv = new Ajv({ allErrors: true });
  const { main, flow } = configJsonSchemas(testChecks);
  const check = (schema: JsonSchema, data: unknown) => {
    const validate = ajv.compile(schema);
    validate(data);
    return (validate.errors ?? []).map((error) => `${error.dataPath} ${error.message}`);
  };
  const yaml = (...parts: string[]) => parse(readFileSync(projectPath(...parts), 'utf8')) as Record<string, unknown>;

  it('accepts the demo configuration', () => {
    expect(check(main, yaml('config', 'plumbline.yaml'))).toEqual([]);
    for (const file of readdirSync(projectPath('config', 'flows'))) expect(check(flow, yaml('config', 'flows', file)), file).toEqual([]);
  });

  it('accepts a flow with check options and mutes', () => {
    expect(check(flow, yaml('test', 'config', 'fixtures', 'base', 'flows', 'monthly-pass.yaml'))).toEqual([]);
  });

  it('flags unknown keys, wrong types, missing mute fields and bad dates', () => {
    const broken = yaml('test', 'config', 'fixtures', 'base', 'flows', 'monthly-pass.yaml') as {
      steps: Array<Record<string, unknown>>;
      checks: Record<string, Record<string, unknown>>;
      mutes: Array<Record<string, unknown>>;
    };
    broken.steps[1] = { name: 'zone', evnt: 'screen_shown' };
    broken.checks.volume!.max_drop = 'thirty';
    delete broken.mutes[0]!.until;
    broken.mutes.push({ check: 'volume', until: '2026-1-5', reason: 'short' });
    expect(check(flow, broken)).toEqual([
      '.steps[1] should NOT have additional properties',
      ".steps[1] should have required property 'event'",
      '.checks.volume.max_drop should match pattern "^\\d+(\\.\\d+)?%$"',
      '.checks.volume.max_drop should be number',
      '.checks.volume.max_drop should match some schema in anyOf',
      ".mutes[0] should have required property 'until'",
      '.mutes[1].until should match pattern "^\\d{4}-\\d{2}-\\d{2}$"',
    ]);
  });

  it('carries descriptions and defaults for hover and completion', () => {
    const properties = main.properties as Record<string, { description?: string; properties?: Record<string, { description?: string; default?: unknown }> }>;
    expect(properties.timezone!.description).toMatch(/IANA/);
    expect(properties.judging!.properties!.history_days).toMatchObject({ default: 120, description: 'Days of rollup history handed to the checks.' });
    const checks = (flow.properties as Record<string, { properties?: Record<string, { description?: string }> }>).checks!;
    expect(checks.properties!.volume!.description).toBe(testChecks[0]!.description);
  });
});
