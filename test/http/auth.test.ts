/**
 * Page credentials (RFC 6750 bearer tokens, RFC 7617 basic auth): with
 * `http.auth`, every page asks for them and the probes never do.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mainSchema } from '../../service/config/schema.js';
import { pageGuard } from '../../service/http/auth.js';
import { Router, text } from '../../service/http/router.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createLogger } from '../../service/log.js';
import { createMetrics } from '../../service/metrics.js';

const main = (auth: Record<string, string>) => mainSchema.parse({ timezone: 'UTC', warehouse: { events_table: 'transit.events', platforms: { web: ['web'] } }, http: { auth } });
const env = { PAGES_TOKEN: 'metro-token-7f3a', PAGES_PASSWORD: 'rider:pass word' };

describe('pageGuard', () => {
  it('is absent without http.auth: the pages are open (and listen on 127.0.0.1 by default)', () => {
    const config = mainSchema.parse({ timezone: 'UTC', warehouse: { events_table: 'transit.events', platforms: { web: ['web'] } } });
    expect(pageGuard(config, env)).toBeUndefined();
    expect(config.http.host).toBe('127.0.0.1');
  });

  it('refuses to start with an empty secret rather than serve open pages', () => {
    expect(() => pageGuard(main({ token: '${PAGES_TOKEN}' }), {})).toThrow(/http.auth.token/);
  });

  it('needs a user with a password, and one of the two kinds', () => {
    expect(() => main({ user: 'analyst' })).toThrow(/user and password go together/);
  });
});

describe('pages behind credentials', () => {
  let server: HttpServer;
  beforeAll(async () => {
    const router = new Router().register('GET', '/', () => text('pages\n')).register('GET', '/healthz', () => text('ok\n')).register('GET', '/readyz', () => text('ready\n'));
    router.register('GET', '/metrics', () => text('# metrics\n'));
    const guard = pageGuard(main({ token: '${PAGES_TOKEN}', user: 'analyst', password: '${PAGES_PASSWORD}' }), env);
    server = await startHttpServer({ router, port: 0, host: '127.0.0.1', log: createLogger({ level: 'silent' }), metrics: createMetrics(), guard: guard! });
  });
  afterAll(async () => {
    await server.close();
  });
  const get = (path: string, authorization?: string) => fetch(`${server.url}${path}`, { headers: authorization ? { authorization } : {} });
  const basic = (credentials: string) => `Basic ${Buffer.from(credentials, 'utf8').toString('base64')}`;

  it.each([
    ['/', undefined, 401],
    ['/', 'Bearer metro-token-7f3a', 200],
    ['/', 'bearer metro-token-7f3a', 200],
    ['/', 'Bearer metro-token-7f3', 401],
    ['/', basic('analyst:rider:pass word'), 200],
    ['/', basic('analyst:wrong'), 401],
    ['/', basic('metro-token-7f3a'), 401],
    ['/', 'Digest metro-token-7f3a', 401],
    ['/nowhere', undefined, 401],
    ['/metrics', undefined, 401],
    ['/metrics', 'Bearer metro-token-7f3a', 200],
    ['/healthz', undefined, 200],
    ['/readyz', undefined, 200],
  ])('GET %s with %s: %i', async (path, authorization, status) => {
    const response = await get(path, authorization);
    expect(response.status).toBe(status);
    if (status === 401) expect(response.headers.get('www-authenticate')).toBe('Basic realm="plumbline", charset="UTF-8", Bearer realm="plumbline"');
  });
});
