/**
 * History is not news: a team installs plumbline with a backfill of more than
 * three months (`plumbline run --from --to`, its days all older than the
 * catch-up window), then starts `serve`. Android stopped sending its rider
 * step twice: in April (over long before the install) and since June 5 (still
 * broken). The chat receiver (a local HTTP server behind the webhook) must get
 * exactly one summary of the backfill, then one message per incident still
 * open, and nothing about April, through the delivery `serve` runs after each
 * day of its catch-up pass.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runRange } from '../../service/pipeline/run-range.js';
import { quoteIdent } from '../../service/db/sql.js';
import { listIncidents } from '../../service/incidents/store.js';
import type { Incident } from '../../service/incidents/types.js';
import { createLogger } from '../../service/log.js';
import { createMetrics } from '../../service/metrics.js';
import { chatDelivery } from '../../service/runner/jobs.js';
import { Runner } from '../../service/runner/runner.js';
import { openRuntime, type Runtime } from '../../service/runtime.js';
import { WEBHOOK_ENV, startReceiver, type Receiver } from '../delivery/fixtures.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { insertJourneys, journeyConfig } from '../pipeline/fixtures.js';

const FROM = '2026-03-01';
const BACKFILL_TO = '2026-06-11';
/** `serve` starts on 2026-06-20 at 06:30 New York time: its catch-up window is 2026-06-12..2026-06-19. */
const SERVE_AT = new Date('2026-06-20T10:30:00Z');
const DATA_TO = '2026-06-19';

describe('a backfill, then serve', () => {
  let warehouse: TestSchema;
  let state: TestSchema;
  let rt: Runtime;
  let receiver: Receiver;
  let afterBackfill: Incident[];
  const speaks = (incident: Incident) => !incident.muted && incident.severity !== 'note';
  /** The messages shown, by idempotency key (the header carries it quoted), in the order first shown. */
  const shown = () => new Map([...receiver.shown].map(([key, body]) => [key.replace(/^"|"$/g, ''), body]));

  beforeAll(async () => {
    warehouse = await createTestSchema('wh');
    state = await createTestSchema('st');
    receiver = await startReceiver();
    process.env[WEBHOOK_ENV] = receiver.url;
    const config = await journeyConfig(warehouse.pool, warehouse.schema, state.schema);
    config.main.delivery.chat.webhook_url = `\${${WEBHOOK_ENV}}`;
    await insertJourneys(warehouse.pool, warehouse.schema, { from: FROM, to: DATA_TO }, { androidWithoutRider: { from: '2026-04-20', to: '2026-04-24' } });
    await warehouse.pool.query({
      text: `delete from ${quoteIdent(warehouse.schema)}.events where platform = 'Android' and props->>'view' = 'rider_details' and occurred_at >= $1`,
      values: ['2026-06-05T04:00:00Z'],
    });
    rt = await openRuntime(config, { env: { PLUMBLINE_WAREHOUSE_URL: warehouse.url, PLUMBLINE_STATE_URL: warehouse.url }, log: createLogger({ level: 'error' }) });
    await runRange(rt, FROM, BACKFILL_TO, { json: true, now: SERVE_AT });
    afterBackfill = (await listIncidents(rt.state, rt.stateSchema, { flows: rt.flows.map((f) => f.id), from: FROM, to: BACKFILL_TO })).filter(speaks);
    const runner = new Runner(rt, { clock: () => SERVE_AT, deliver: chatDelivery(createMetrics({ processMetrics: false })), metrics: createMetrics({ processMetrics: false }) });
    const pass = await runner.daily('start');
    expect(pass.status).toBe('done');
    expect(pass.days).toEqual(['2026-06-12', '2026-06-13', '2026-06-14', '2026-06-15', '2026-06-16', '2026-06-17', '2026-06-18', '2026-06-19']);
  }, 300_000);

  afterAll(async () => {
    delete process.env[WEBHOOK_ENV];
    await receiver?.close();
    await rt?.close();
    await warehouse?.drop();
    await state?.drop();
  });

  it('recorded April, over long ago, and what is still broken', () => {
    const android = afterBackfill.filter((i) => i.platform === 'android');
    expect(android.some((i) => i.status === 'resolved' && i.lastSeenDay <= '2026-04-30')).toBe(true);
    expect(android.some((i) => i.status !== 'resolved' && i.lastSeenDay === BACKFILL_TO)).toBe(true);
  });

  it('posts exactly one summary, first, then one message per incident still open', () => {
    const keys = [...shown().keys()];
    const open = afterBackfill.filter((i) => i.status !== 'resolved');
    expect(keys[0]).toBe(`plumbline.backfill.${FROM}.${BACKFILL_TO}`);
    expect(shown().get(keys[0]!)!.text).toBe(`backfill ${FROM}..${BACKFILL_TO}: ${afterBackfill.length} incidents, ${open.length} still open`);
    expect(keys.slice(1).sort()).toEqual(open.map((i) => `plumbline.${i.id}.opened.${i.lastSeenDay}`).sort());
    expect(receiver.requests.length).toBe(keys.length);
  });

  it('lists and links every open incident in the summary', () => {
    const summary = JSON.stringify(shown().get(`plumbline.backfill.${FROM}.${BACKFILL_TO}`));
    for (const incident of afterBackfill.filter((i) => i.status !== 'resolved')) expect(summary).toContain(`/incidents/${incident.id}`);
    for (const incident of afterBackfill.filter((i) => i.status === 'resolved')) expect(summary).not.toContain(incident.id);
  });
});
