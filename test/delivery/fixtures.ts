/**
 * Shared pieces of the delivery tests: a Metro Pass main config, a sender
 * runtime on a test schema, a fake clock, and a local HTTP server playing
 * the chat webhook (it shows a message once per Idempotency-Key, as a
 * receiver that honours the header does).
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import type pg from 'pg';
import { mainSchema, type MainConfig, type MainConfigInput } from '../../service/config/schema.js';
import type { SenderRuntime } from '../../service/delivery/sender.js';
import { createLogger } from '../../service/log.js';
import { MENTION, OWNER } from '../incidents/fixtures.js';

export const WEBHOOK_ENV = 'PLUMBLINE_TEST_WEBHOOK';

export function testMain(overrides: Partial<MainConfigInput> = {}): MainConfig {
  return mainSchema.parse({
    timezone: 'America/New_York',
    warehouse: { events_table: 'transit.events', platforms: { web: ['web'], android: ['Android'], ios: ['iOS'] } },
    owners: { [OWNER]: { chat_mention: MENTION, email: ['growth-analytics@metropass.example', 'pass-pm@metropass.example'] } },
    http: { public_url: 'http://plumbline.metropass.example' },
    ...overrides,
    delivery: { chat: { webhook_url: `\${${WEBHOOK_ENV}}` }, max_attempts: 8, ...overrides.delivery },
  });
}

export function senderRuntime(pool: pg.Pool, schema: string, main: MainConfig = testMain()): SenderRuntime {
  return { state: pool, stateSchema: schema, log: createLogger({ level: 'silent' }), config: { main } };
}

/** A clock that only moves when the sender sleeps. */
export function fakeClock(start: Date) {
  let t = start.getTime();
  return {
    now: () => new Date(t),
    sleep: async (ms: number) => {
      t += ms;
    },
    advance(ms: number) {
      t += ms;
    },
  };
}

export interface ReceivedRequest {
  key: string | undefined;
  body: { text: string; blocks: unknown[] };
  answer: string;
  /** Fake-clock time of arrival, when a clock is attached. */
  at: number | undefined;
}

/** How the receiver answers one request: a status (with headers), or 'hang' (never answers). */
export type Answer = { status: number; headers?: Record<string, string> } | 'hang';

export interface Receiver {
  url: string;
  requests: ReceivedRequest[];
  /** First body per idempotency key, in the order first shown. */
  shown: Map<string, ReceivedRequest['body']>;
  /** Answers for the next requests, in order; then 200. */
  script: Answer[];
  /** Resolves with the next request as it arrives. */
  nextRequest(): Promise<ReceivedRequest>;
  close(): Promise<void>;
}

export async function startReceiver(clock?: { now: () => Date }): Promise<Receiver> {
  const waiting: Array<(request: ReceivedRequest) => void> = [];
  const receiver: Receiver = {
    url: '',
    requests: [],
    shown: new Map(),
    script: [],
    nextRequest: () => new Promise((resolve) => waiting.push(resolve)),
    close: async () => {
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
    },
  };
  const handle = async (req: IncomingMessage, res: ServerResponse) => {
    let raw = '';
    for await (const chunk of req) raw += String(chunk);
    const answer = receiver.script.shift() ?? { status: 200 };
    const key = req.headers['idempotency-key'] as string | undefined;
    const request: ReceivedRequest = { key, body: JSON.parse(raw) as ReceivedRequest['body'], answer: answer === 'hang' ? 'hang' : String(answer.status), at: clock?.now().getTime() };
    receiver.requests.push(request);
    waiting.shift()?.(request);
    if (answer === 'hang') return;
    if (answer.status === 200 && key !== undefined && !receiver.shown.has(key)) receiver.shown.set(key, request.body);
    res.writeHead(answer.status, { 'content-type': 'text/plain', ...answer.headers }).end(answer.status === 200 ? 'ok' : 'no');
  };
  const server: Server = createServer((req, res) => void handle(req, res));
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  receiver.url = `http://127.0.0.1:${port}/services/T0METRO/B0PASS/secret-token`;
  return receiver;
}
