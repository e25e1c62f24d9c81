/**
 * A second plumbline on the same embedded database folder: while a live
 * process holds it (its id on the first line of postmaster.pid, as
 * PostgreSQL writes it), opening it says so with that process id and the
 * command exits 3 ("a database could not be reached"), instead of dying in
 * its error path.
 */
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { EXIT } from '../../service/cli/exit-codes.js';
import { withRuntime } from '../../service/cli/with-runtime.js';
import { createLogger } from '../../service/log.js';

describe('an embedded database folder in use', () => {
  const folders: string[] = [];
  afterEach(() => {
    for (const folder of folders.splice(0)) rmSync(folder, { recursive: true, force: true });
    vi.restoreAllMocks();
  });

  it('names the process holding it and exits 3', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-in-use-'));
    folders.push(dir);
    mkdirSync(join(dir, 'data'));
    writeFileSync(join(dir, 'data', 'PG_VERSION'), '17\n');
    // This test process stands in for the running server.
    writeFileSync(join(dir, 'data', 'postmaster.pid'), `${process.pid}\n${join(dir, 'data')}\n`);
    const printed: string[] = [];
    vi.spyOn(console, 'error').mockImplementation((line: string) => void printed.push(line));
    const work = vi.fn(async () => EXIT.ok);
    const code = await withRuntime('config', work, { forceEmbedded: true, embeddedDir: dir, log: createLogger({ level: 'silent' }) });
    expect(code).toBe(EXIT.database);
    expect(work).not.toHaveBeenCalled();
    expect(printed.join('\n')).toContain(`in use by process ${process.pid}`);
  }, 60_000);
});
