/**
 * Requests that once ended `serve`: a request target `new URL` cannot parse
 * (`GET //[`), a handler whose answer cannot be written (a header value Node
 * refuses). Each is answered (400 or 500) and logged, and the server keeps
 * serving.
 */
import { connect } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Router, text } from '../../service/http/router.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createMetrics } from '../../service/metrics.js';
import { memoryLog } from '../scheduler/helpers.js';

/** Sends `raw` as is and returns the status line of the answer ('' when the connection closes without one). */
export async function rawRequest(port: number, raw: string): Promise<string> {
  return await new Promise((resolve, reject) => {
    const socket = connect(port, '127.0.0.1', () => socket.end(raw));
    let received = '';
    socket.setEncoding('latin1');
    socket.on('data', (chunk: string) => (received += chunk));
    socket.on('error', reject);
    socket.on('close', () => resolve(received.split('\r\n')[0] ?? ''));
  });
}

describe('hostile requests', () => {
  let server: HttpServer;
  const { log, lines } = memoryLog();
  const metrics = createMetrics();

  beforeAll(async () => {
    const router = new Router()
      .register('GET', '/', () => text('ok'))
      .register('GET', '/bad-header', () => ({ status: 200, headers: { 'x-note': 'line\nbreak' }, body: 'x' }));
    server = await startHttpServer({ router, port: 0, host: '127.0.0.1', log, metrics });
  });
  afterAll(async () => {
    await server.close();
  });

  it.each(['GET //[ HTTP/1.1', 'GET http://[::1 HTTP/1.1', 'GET //%zz[ HTTP/1.1'])('answers 400 to %s and keeps serving', async (line) => {
    expect(await rawRequest(server.port, `${line}\r\nHost: x\r\nConnection: close\r\n\r\n`)).toBe('HTTP/1.1 400 Bad Request');
    expect((await fetch(`${server.url}/`)).status).toBe(200);
  });

  it('answers 500 when the answer cannot be written, and logs it', async () => {
    expect((await fetch(`${server.url}/bad-header`)).status).toBe(500);
    expect(lines.some((line) => line.msg === 'request failed')).toBe(true);
    expect((await fetch(`${server.url}/`)).status).toBe(200);
  });
});

describe('requests the fault suite found unanswered or failing', () => {
  let server: HttpServer;
  const { log } = memoryLog();
  const metrics = createMetrics();
  beforeAll(async () => {
    const router = new Router().register('GET', '/', () => text('ok')).register('GET', '/incidents/:id', ({ params }) => {
      if (params.id!.includes('\u0000')) throw new Error('invalid byte sequence for encoding "UTF8": 0x00');
      return text('incident');
    });
    server = await startHttpServer({ router, port: 0, host: '127.0.0.1', log, metrics });
  });
  afterAll(async () => {
    await server.close();
  });

  it.each([
    ['CONNECT example.com:443 HTTP/1.1', 'HTTP/1.1 405 Method Not Allowed'],
    ['GET /incidents/%00 HTTP/1.1', 'HTTP/1.1 404 Not Found'],
    ['GET /', 'HTTP/1.1 400 Bad Request'],
  ])('%s -> %s', async (line, status) => {
    expect(await rawRequest(server.port, `${line}\r\nHost: x\r\nConnection: close\r\n\r\n`)).toBe(status);
  });
});
