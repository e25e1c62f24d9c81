/**
 * Without the chdb package (a production install leaves it out), opening the
 * in-process ClickHouse engine fails with a message saying how to install it.
 */
import { describe, expect, it, vi } from 'vitest';

vi.mock('chdb', () => {
  throw new Error("Cannot find package 'chdb' imported from embedded.js");
});

describe('the in-process ClickHouse engine without chdb installed', () => {
  it('says to run npm install chdb', async () => {
    const { openEmbedded } = await import('../../service/warehouse/clickhouse/embedded.js');
    await expect(openEmbedded({ dataDir: '.plumbline/never-created', timeoutSeconds: 60 })).rejects.toThrow(/needs the chdb package .*run `npm install chdb`/);
  });
});
