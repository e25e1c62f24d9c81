/**
 * `plumbline validate` as a command: exit codes, --strict, --json, the demo
 * configuration, and the real process (spawned through tsx, so no build step).
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { describe, expect, it } from 'vitest';
import { validateCommand } from '../../service/cli/commands/validate.js';
import { EXIT } from '../../service/cli/exit-codes.js';
import { configJsonSchemas, schemaText } from '../../service/config/json-schema.js';
import { projectPath } from '../../service/paths.js';
import { brokenCopy, replace, runValidate } from './helpers.js';

const OWNER_TYPO = { 'flows/monthly-pass.yaml': replace('owner: growth-analytics', 'owner: growth') };
const CAP_TOO_LONG = { 'flows/monthly-pass.yaml': replace('step_time_cap: 5m', 'step_time_cap: 45m') };

describe('validate exit codes', () => {
  it.each([
    { name: 'clean', changes: {}, strict: false, code: EXIT.ok },
    { name: 'clean, --strict', changes: {}, strict: true, code: EXIT.ok },
    { name: 'warnings only', changes: OWNER_TYPO, strict: false, code: EXIT.ok },
    { name: 'warnings only, --strict', changes: OWNER_TYPO, strict: true, code: EXIT.warnings },
    { name: 'errors', changes: CAP_TOO_LONG, strict: false, code: EXIT.config },
    { name: 'errors, --strict', changes: CAP_TOO_LONG, strict: true, code: EXIT.config },
  ])('$name: exit $code', async ({ changes, strict, code }) => {
    const fixture = brokenCopy(changes);
    try {
      expect((await runValidate(fixture, { strict })).code).toBe(code);
    } finally {
      fixture.remove();
    }
  });

  it('prints a summary after the problems', async () => {
    const fixture = brokenCopy({ ...OWNER_TYPO });
    try {
      expect((await runValidate(fixture)).lines.at(-1)).toBe('config: valid with 1 warning (2 flows: account_signup, monthly_pass)');
    } finally {
      fixture.remove();
    }
    const broken = brokenCopy({ ...CAP_TOO_LONG, 'plumbline.yaml': replace('settle_time: 2h', 'settle_time: 2 hours') });
    try {
      expect((await runValidate(broken)).lines.at(-1)).toBe('config: 2 errors');
    } finally {
      broken.remove();
    }
  });

  it('--json lists every problem with its position and printed form', async () => {
    const fixture = brokenCopy({ 'flows/monthly-pass.yaml': (text) => replace('owner: growth-analytics', 'owner: growth')(CAP_TOO_LONG['flows/monthly-pass.yaml'](text)) });
    try {
      const run = await runValidate(fixture, { json: true });
      expect(run.code).toBe(EXIT.config);
      expect(JSON.parse(run.lines.join('\n'))).toEqual({
        dir: 'config',
        valid: false,
        errors: 1,
        warnings: 1,
        flows: ['account_signup', 'monthly_pass'],
        problems: [
          {
            file: 'config/flows/monthly-pass.yaml',
            line: 3,
            column: 8,
            key: 'owner',
            expected: 'an owner listed under owners in config/plumbline.yaml (growth-analytics, accounts)',
            found: '"growth"',
            severity: 'warning',
            hint: 'did you mean growth-analytics?',
            text: 'config/flows/monthly-pass.yaml:3:8 warning: owner: expected an owner listed under owners in config/plumbline.yaml (growth-analytics, accounts), found "growth" (did you mean growth-analytics?)',
          },
          {
            file: 'config/flows/monthly-pass.yaml',
            line: 10,
            column: 16,
            key: 'step_time_cap',
            expected: 'a cap no longer than conversion_window (30m)',
            found: '45m',
            severity: 'error',
            hint: 'no step-to-step time can exceed the window, so the cap would never apply',
            text: 'config/flows/monthly-pass.yaml:10:16 step_time_cap: expected a cap no longer than conversion_window (30m), found 45m (no step-to-step time can exceed the window, so the cap would never apply)',
          },
        ],
      });
    } finally {
      fixture.remove();
    }
  });
});

describe('the demo configuration', () => {
  it('validates clean with the registered checks', () => {
    const lines: string[] = [];
    const log = console.log;
    console.log = (text: string) => void lines.push(text);
    let code: number;
    try {
      code = validateCommand(projectPath('config'), { json: true, env: {}, cwd: projectPath() });
    } finally {
      console.log = log;
    }
    const report = JSON.parse(lines.join('\n')) as { errors: number; warnings: number; problems: unknown[] };
    expect(report.problems).toEqual([]);
    expect(code).toBe(EXIT.ok);
  });
});

describe('the plumbline process', () => {
  const cli = (args: string[], cwd = projectPath()) =>
    spawnSync(process.execPath, ['--import', pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href, projectPath('service', 'cli', 'main.ts'), ...args], {
      cwd,
      encoding: 'utf8',
      env: { ...process.env, PLUMBLINE_WAREHOUSE_URL: '', PLUMBLINE_STATE_URL: '' },
      timeout: 60_000,
    });

  it('validate config exits 0', () => {
    const result = cli(['validate', 'config']);
    expect(result.stdout).toMatch(/^config: valid \(2 flows: account_signup, monthly_pass\)\n$/);
    expect(result.status).toBe(EXIT.ok);
  });

  it('a broken copy exits 2 with positioned messages', () => {
    // Without check options and mutes, so the output does not depend on which checks are registered.
    const fixture = brokenCopy({
      'flows/monthly-pass.yaml': (text) => CAP_TOO_LONG['flows/monthly-pass.yaml'](text!.slice(0, text!.indexOf('checks:\n'))),
      'plumbline.yaml': replace('timezone: America/New_York', 'timezone: America/New_Yrok'),
    });
    try {
      const result = cli(['validate', 'config'], fixture.root);
      expect(result.stdout.split('\n')).toEqual([
        'config/plumbline.yaml:2:11 timezone: expected an IANA time zone such as America/New_York, found string "America/New_Yrok" (did you mean America/New_York?)',
        'config/flows/monthly-pass.yaml:10:16 step_time_cap: expected a cap no longer than conversion_window (30m), found 45m (no step-to-step time can exceed the window, so the cap would never apply)',
        'config: 2 errors',
        '',
      ]);
      expect(result.status).toBe(EXIT.config);
    } finally {
      fixture.remove();
    }
  });

  it('schema --out writes the two JSON Schemas', () => {
    const out = mkdtempSync(join(tmpdir(), 'plumbline-schema-'));
    try {
      const result = cli(['schema', '--out', out]);
      expect(result.status).toBe(EXIT.ok);
      const schemas = configJsonSchemas();
      expect(readFileSync(join(out, 'plumbline.schema.json'), 'utf8')).toBe(schemaText(schemas.main));
      expect(readFileSync(join(out, 'flow.schema.json'), 'utf8')).toBe(schemaText(schemas.flow));
    } finally {
      rmSync(out, { recursive: true, force: true });
    }
  });
});
