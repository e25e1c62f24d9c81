import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { escapeHtml } from '../delivery/text.js';
import type { Logger } from '../log.js';
import { metrics as processMetrics, type Metrics } from '../metrics.js';
import { OPEN_PATHS, type PageGuard } from './auth.js';
import { html, type HttpResponse, type Router } from './router.js';

export interface HttpServerOptions {
  router: Router;
  /** 0 picks a free port (tests). */
  port: number;
  host: string;
  log: Logger;
  metrics?: Metrics;
  /** Credentials the pages ask for (all but OPEN_PATHS); none: open to whoever reaches the port. */
  guard?: PageGuard;
}

export interface HttpServer {
  /** Where the server answers, e.g. http://localhost:8080 (a wildcard host is shown as localhost). */
  url: string;
  port: number;
  /** Stops accepting connections, lets requests in flight finish for up to `graceMs`, then cuts the rest. */
  close(graceMs?: number): Promise<void>;
}

/**
 * Pages show client data (event names, parameter values): no scripts, no
 * framing, no foreign resources, whatever a page renders. A handler can
 * replace any of these headers.
 */
const DEFAULT_HEADERS: Record<string, string> = {
  'x-content-type-options': 'nosniff',
  'referrer-policy': 'no-referrer',
  'content-security-policy': "default-src 'none'; style-src 'self' 'unsafe-inline'; img-src 'self' data:; form-action 'self'; frame-ancestors 'none'",
  'cache-control': 'no-store',
};

export async function startHttpServer(options: HttpServerOptions): Promise<HttpServer> {
  const counters = options.metrics ?? processMetrics;
  const server: Server = createServer((request, response) => {
    void handle(options, counters, request, response);
  });
  // Probes and scrapes are short; a slow or stuck client must not hold a socket for minutes.
  server.requestTimeout = 30_000;
  server.headersTimeout = 10_000;
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(options.port, options.host, () => {
      server.off('error', reject);
      resolve();
    });
  });
  server.on('error', (error) => options.log.error({ err: error }, 'http server error'));
  const { port } = server.address() as AddressInfo;
  const shownHost = ['0.0.0.0', '::', ''].includes(options.host) ? 'localhost' : options.host.includes(':') ? `[${options.host}]` : options.host;
  return {
    url: `http://${shownHost}:${port}`,
    port,
    async close(graceMs = 2000) {
      const closed = new Promise<void>((resolve) => server.close(() => resolve()));
      server.closeIdleConnections();
      const cut = setTimeout(() => server.closeAllConnections(), graceMs);
      await closed;
      clearTimeout(cut);
    },
  };
}

async function handle(options: HttpServerOptions, counters: Metrics, request: IncomingMessage, response: ServerResponse): Promise<void> {
  const method = request.method ?? 'GET';
  const url = new URL(request.url ?? '/', 'http://plumbline.invalid');
  const match = options.router.match(method, url.pathname);
  let route = 'unmatched';
  let result: HttpResponse;
  if (options.guard && !OPEN_PATHS.has(url.pathname) && !options.guard.allows(request.headers)) {
    route = 'unauthorised';
    result = { status: 401, headers: { 'www-authenticate': options.guard.challenge, 'content-type': 'text/plain; charset=utf-8' }, body: 'credentials required\n' };
  } else if (match.kind === 'found') {
    route = match.route;
    try {
      result = await match.handler({ method, path: url.pathname, params: match.params, query: url.searchParams, headers: request.headers, route, raw: request });
    } catch (error) {
      options.log.error({ err: error, route, method }, 'request failed');
      result = html(page('Something went wrong', '<p>plumbline could not answer this request; the details are in its logs.</p>'), 500);
    }
  } else if (match.kind === 'wrong_method') {
    result = { status: 405, headers: { allow: [...match.allowed, ...(match.allowed.includes('GET') ? ['HEAD'] : [])].join(', ') }, body: '' };
  } else {
    result = html(notFound(options.router, url.pathname), 404);
  }
  counters.httpRequests.inc({ route, status: String(result.status) });
  options.log.debug({ method, route, status: result.status }, 'http request');
  const body = typeof result.body === 'string' ? Buffer.from(result.body) : result.body;
  response.writeHead(result.status, { ...DEFAULT_HEADERS, 'content-length': String(body.length), ...result.headers });
  response.end(method === 'HEAD' ? undefined : body);
}

function page(title: string, content: string): string {
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>${escapeHtml(title)} · plumbline</title></head><body><h1>${escapeHtml(title)}</h1>${content}</body></html>\n`;
}

/** Lists the fixed-path pages, so a mistyped address still leads somewhere. */
function notFound(router: Router, path: string): string {
  const links = router
    .list()
    .filter((route) => route.method === 'GET' && !route.pattern.includes(':'))
    .map((route) => `<li><a href="${escapeHtml(route.pattern)}">${escapeHtml(route.pattern)}</a></li>`)
    .join('');
  return page('Not found', `<p>Nothing lives at <code>${escapeHtml(path)}</code>. Known addresses:</p><ul>${links}</ul>`);
}
