/**
 * Every PostgreSQL warehouse statement runs inside `begin read only`, the day
 * bounds and the late-row probe included, so a read-only role is enough and
 * no statement can write to the team's warehouse. The pool's own `query`
 * (which would run outside such a transaction) is made to fail; every
 * method of the seam must still answer, and every connection it takes must
 * open with `begin read only`.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type pg from 'pg';
import { PostgresWarehouse } from '../../service/warehouse/postgres/index.js';
import type { FlowDefinition } from '../../checks/types.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { createEventsTable, testMapping } from '../helpers/warehouse.js';

const flow: FlowDefinition = {
  id: 'pass',
  owner: 'team',
  steps: [
    { name: 'intro', event: 'screen_shown', where: {} },
    { name: 'done', event: 'purchase', where: {} },
  ],
  conversionWindowSeconds: 3600,
  stepTimeCapSeconds: 600,
  entry: 'first_step_only',
  platforms: ['web'],
  events: ['screen_shown', 'purchase'],
  contracts: {},
};

describe('the PostgreSQL warehouse reads only', () => {
  let db: TestSchema;
  beforeAll(async () => {
    db = await createTestSchema('ro');
    await createEventsTable(db.pool, db.schema);
  });
  afterAll(async () => {
    await db?.drop();
  });

  it('runs every statement of the seam in a read-only transaction', async () => {
    const first: string[] = [];
    const guarded = {
      query: () => {
        throw new Error('a warehouse statement ran outside a read-only transaction');
      },
      connect: async () => {
        const client = await db.pool.connect();
        const query = client.query.bind(client) as (...args: unknown[]) => Promise<unknown>;
        let seen = false;
        (client as unknown as { query: (...args: unknown[]) => Promise<unknown> }).query = (q, ...rest) => {
          if (!seen) first.push(typeof q === 'string' ? q : (q as { text: string }).text);
          seen = true;
          return query(q, ...rest);
        };
        return client;
      },
    } as unknown as pg.Pool;
    const warehouse = new PostgresWarehouse(guarded, testMapping(db.schema), { workMem: '64MB', statementTimeoutSeconds: 60 });
    const range = await warehouse.dayBounds('2026-06-10', 'UTC');
    expect(range.hi.getTime() - range.lo.getTime()).toBe(86_400_000);
    await warehouse.eventCounts(range, []);
    await warehouse.hourCounts(range, ['screen_shown']);
    await warehouse.paramProfiles(range, ['screen_shown'], []);
    await warehouse.flow(flow, range);
    await warehouse.probeCounts([{ day: '2026-06-09', lo: new Date('2026-06-09T00:00:00Z'), hi: new Date('2026-06-10T00:00:00Z') }]);
    expect(first.length).toBe(6);
    expect(new Set(first)).toEqual(new Set(['begin read only']));
  });
});
