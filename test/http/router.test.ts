/**
 * The router and server the pages are built on: `:name` parameters, literal
 * segments before parameters, 404 with the known addresses, 405 with Allow,
 * HEAD from GET, a failing handler answered with 500 and logged, and the
 * protective default headers that a handler may override.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Router, html, json, text } from '../../service/http/router.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createMetrics } from '../../service/metrics.js';
import { memoryLog } from '../scheduler/helpers.js';

describe('Router.match', () => {
  const router = new Router()
    .register('GET', '/incidents/:id', () => text('one'))
    .register('GET', '/incidents/open', () => text('open'))
    .register('POST', '/incidents/:id/mute', () => text('muted'));

  it('decodes parameters and prefers literal segments', () => {
    expect(router.match('GET', '/incidents/monthly_pass-20261118-a1b2%20c3')).toMatchObject({ kind: 'found', params: { id: 'monthly_pass-20261118-a1b2 c3' }, route: '/incidents/:id' });
    expect(router.match('GET', '/incidents/open')).toMatchObject({ kind: 'found', params: {}, route: '/incidents/open' });
    expect(router.match('GET', '/incidents/')).toEqual({ kind: 'none' });
    expect(router.match('GET', '/incidents/%E0%A4%A')).toEqual({ kind: 'none' }); // malformed escape
  });

  it('tells a wrong method from an unknown path, and answers HEAD from GET', () => {
    expect(router.match('GET', '/incidents/x/mute')).toEqual({ kind: 'wrong_method', allowed: ['POST'] });
    expect(router.match('HEAD', '/incidents/x')).toMatchObject({ kind: 'found', route: '/incidents/:id' });
  });

  it('refuses a pattern registered twice', () => {
    expect(() => router.register('GET', '/incidents/:other', () => text(''))).toThrow('already registered');
  });
});

describe('startHttpServer', () => {
  let server: HttpServer;
  const { log, lines } = memoryLog();
  const metrics = createMetrics();

  beforeAll(async () => {
    const router = new Router()
      .register('GET', '/', () => html('<h1>overview</h1>'))
      .register('GET', '/flows/:flow', ({ params, query }) => json({ flow: params.flow, days: query.get('days') }))
      .register('GET', '/chart.svg', () => ({ status: 200, headers: { 'content-type': 'image/svg+xml', 'cache-control': 'max-age=60' }, body: '<svg/>' }))
      .register('GET', '/broken', () => {
        throw new Error('page bug');
      });
    server = await startHttpServer({ router, port: 0, host: '127.0.0.1', log, metrics });
  });
  afterAll(async () => {
    await server.close();
  });

  it('serves a page with the protective default headers', async () => {
    const response = await fetch(`${server.url}/`);
    expect(response.status).toBe(200);
    expect(await response.text()).toBe('<h1>overview</h1>');
    expect(response.headers.get('content-type')).toBe('text/html; charset=utf-8');
    expect(response.headers.get('content-security-policy')).toContain("default-src 'none'");
    expect(response.headers.get('x-content-type-options')).toBe('nosniff');
  });

  it('passes parameters and the query string; a handler can override headers', async () => {
    expect(await (await fetch(`${server.url}/flows/monthly_pass?days=28`)).json()).toEqual({ flow: 'monthly_pass', days: '28' });
    const chart = await fetch(`${server.url}/chart.svg`);
    expect(chart.headers.get('content-type')).toBe('image/svg+xml');
    expect(chart.headers.get('cache-control')).toBe('max-age=60');
  });

  it('answers HEAD without a body, 405 with Allow, 404 with the known addresses escaped', async () => {
    const head = await fetch(`${server.url}/flows/x`, { method: 'HEAD' });
    expect(head.status).toBe(200);
    expect(await head.text()).toBe('');
    const post = await fetch(`${server.url}/`, { method: 'POST' });
    expect(post.status).toBe(405);
    expect(post.headers.get('allow')).toBe('GET, HEAD');
    const missing = await fetch(`${server.url}/%3Cscript%3E`);
    expect(missing.status).toBe(404);
    const body = await missing.text();
    expect(body).toContain('<a href="/">/</a>');
    expect(body).toContain('<a href="/chart.svg">');
    expect(body).not.toContain('/flows/:flow');
    expect(body).not.toContain('<script>');
  });

  it('answers 500 when a handler throws, logs the error and keeps serving', async () => {
    const response = await fetch(`${server.url}/broken`);
    expect(response.status).toBe(500);
    expect(await response.text()).not.toContain('page bug');
    expect(lines.some((line) => line.msg === 'request failed' && line.route === '/broken')).toBe(true);
    expect((await fetch(`${server.url}/`)).status).toBe(200);
    const counted = await metrics.registry.getSingleMetric('plumbline_http_requests_total')!.get();
    expect(counted.values).toContainEqual({ value: 1, labels: { route: '/broken', status: '500' } });
    expect(counted.values).toContainEqual({ value: 1, labels: { route: 'unmatched', status: '404' } });
  });

  it('close() lets an idle keep-alive connection go at once', async () => {
    const router = new Router().register('GET', '/', () => text('x'));
    const other = await startHttpServer({ router, port: 0, host: '127.0.0.1', log, metrics: createMetrics() });
    await fetch(`${other.url}/`); // leaves a keep-alive socket open
    const started = Date.now();
    await other.close(5000);
    expect(Date.now() - started).toBeLessThan(1000);
  });
});
