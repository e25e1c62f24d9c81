import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Duplex } from 'node:stream';
import { escapeHtml } from '../present/text.js';
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
    handle(options, counters, request, response).catch((error: unknown) => answerFailure(options.log, counters, response, error));
  });
  // CONNECT (a proxy tunnel) and protocol upgrades are not served: refused, never left hanging.
  const refuse = (_request: IncomingMessage, socket: Duplex) => {
    counters.httpRequests.inc({ route: 'unmatched', status: '405' });
    socket.end('HTTP/1.1 405 Method Not Allowed\r\nconnection: close\r\ncontent-length: 0\r\n\r\n');
  };
  server.on('connect', refuse);
  server.on('upgrade', refuse);
  // Requests Node cannot parse (broken request line, oversized headers) never reach the handler: count and log them.
  server.on('clientError', (error: NodeJS.ErrnoException, socket) => {
    const tooLarge = error.code === 'HPE_HEADER_OVERFLOW';
    counters.httpRequests.inc({ route: 'unparsed', status: tooLarge ? '431' : '400' });
    options.log.debug({ code: error.code }, 'unparsable http request');
    const status = tooLarge ? '431 Request Header Fields Too Large' : '400 Bad Request';
    if (socket.writable && !socket.destroyed) socket.end(`HTTP/1.1 ${status}\r\nconnection: close\r\ncontent-length: 0\r\n\r\n`);
    else socket.destroy();
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
  const url = request.httpVersionMajor === 1 ? parseTarget(request.url) : undefined;
  if (!url) {
    counters.httpRequests.inc({ route: 'unmatched', status: '400' });
    send(response, method, { status: 400, headers: { 'content-type': 'text/plain; charset=utf-8' }, body: 'bad request: HTTP/1.x with a valid target expected\n' });
    return;
  }
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
  send(response, method, result);
}

/** The request target as a URL, or undefined when it cannot be parsed (`//[`). */
function parseTarget(target: string | undefined): URL | undefined {
  try {
    return new URL(target ?? '/', 'http://plumbline.invalid');
  } catch {
    return undefined;
  }
}

function send(response: ServerResponse, method: string, result: HttpResponse): void {
  const body = typeof result.body === 'string' ? Buffer.from(result.body) : result.body;
  response.writeHead(result.status, { ...DEFAULT_HEADERS, 'content-length': String(body.length), ...result.headers });
  response.end(method === 'HEAD' ? undefined : body);
}

/** Whatever failed while answering (writing a refused header, a bug): a 500 when nothing was sent yet, always a log line. */
function answerFailure(log: Logger, counters: Metrics, response: ServerResponse, error: unknown): void {
  log.error({ err: error }, 'request failed');
  counters.httpRequests.inc({ route: 'failed', status: '500' });
  try {
    if (!response.headersSent) {
      response.removeHeader('content-length');
      response.writeHead(500, { 'content-type': 'text/plain; charset=utf-8', 'cache-control': 'no-store' });
      response.end('plumbline could not answer this request; the details are in its logs.\n');
    } else {
      response.destroy();
    }
  } catch {
    response.destroy();
  }
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
