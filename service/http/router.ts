import type { IncomingHttpHeaders, IncomingMessage } from 'node:http';

export type Method = 'GET' | 'POST';

export interface HttpRequest {
  method: string;
  /** The path without the query string, as sent (percent-encoded). */
  path: string;
  /** Values of the pattern's `:name` segments, percent-decoded. */
  params: Record<string, string>;
  query: URLSearchParams;
  headers: IncomingHttpHeaders;
  /** The pattern that matched, e.g. `/incidents/:id` (what metrics and logs name). */
  route: string;
  raw: IncomingMessage;
}

export interface HttpResponse {
  status: number;
  /** Set here to override the server's defaults (content type, content security policy, caching). */
  headers?: Record<string, string>;
  body: string | Buffer;
}

export type Handler = (request: HttpRequest) => HttpResponse | Promise<HttpResponse>;

interface Route {
  method: Method;
  pattern: string;
  segments: string[];
  handler: Handler;
}

export type Match =
  | { kind: 'found'; handler: Handler; params: Record<string, string>; route: string }
  | { kind: 'wrong_method'; allowed: Method[] }
  | { kind: 'none' };

/**
 * A small router: `register(method, '/incidents/:id', handler)`. Patterns are
 * literal segments and `:name` segments (one whole segment each); literal
 * segments win over parameters, so `/incidents/open` can sit beside
 * `/incidents/:id`. HEAD is answered by the GET handler without a body.
 */
export class Router {
  private readonly routes: Route[] = [];

  register(method: Method, pattern: string, handler: Handler): this {
    if (!pattern.startsWith('/')) throw new Error(`route patterns start with /: ${pattern}`);
    const segments = split(pattern);
    // Parameter names do not tell routes apart: /a/:id and /a/:name would shadow each other.
    const shape = (parts: string[]) => parts.map((part) => (part.startsWith(':') ? ':' : part)).join('/');
    const clash = this.routes.find((route) => route.method === method && shape(route.segments) === shape(segments));
    if (clash) throw new Error(`${method} ${pattern} is already registered`);
    this.routes.push({ method, pattern, segments, handler });
    return this;
  }

  match(method: string, path: string): Match {
    const wanted = method === 'HEAD' ? 'GET' : method;
    const parts = split(path);
    const candidates = this.routes
      .map((route) => ({ route, params: matchSegments(route.segments, parts) }))
      .filter((candidate): candidate is { route: Route; params: Record<string, string> } => candidate.params !== undefined)
      .sort((a, b) => specificity(b.route) - specificity(a.route));
    const hit = candidates.find((candidate) => candidate.route.method === wanted);
    if (hit) return { kind: 'found', handler: hit.route.handler, params: hit.params, route: hit.route.pattern };
    if (candidates.length > 0) return { kind: 'wrong_method', allowed: [...new Set(candidates.map((candidate) => candidate.route.method))] };
    return { kind: 'none' };
  }

  /** Registered patterns, for the not-found page. */
  list(): Array<{ method: Method; pattern: string }> {
    return this.routes.map(({ method, pattern }) => ({ method, pattern }));
  }
}

function split(path: string): string[] {
  return path.split('/').filter((segment) => segment !== '');
}

function matchSegments(pattern: string[], parts: string[]): Record<string, string> | undefined {
  if (pattern.length !== parts.length) return undefined;
  const params: Record<string, string> = {};
  for (let i = 0; i < pattern.length; i++) {
    const expected = pattern[i]!;
    const actual = parts[i]!;
    if (expected.startsWith(':')) {
      try {
        params[expected.slice(1)] = decodeURIComponent(actual);
      } catch {
        return undefined;
      }
      // No page names anything with control characters; PostgreSQL refuses NUL in text outright.
      // eslint-disable-next-line no-control-regex
      if (/[\u0000-\u001f\u007f]/.test(params[expected.slice(1)]!)) return undefined;
    } else if (expected !== actual) {
      return undefined;
    }
  }
  return params;
}

/** Literal segments count more than parameters, earlier segments more than later ones. */
function specificity(route: Route): number {
  return route.segments.reduce((score, segment, i) => score + (segment.startsWith(':') ? 0 : 2 ** (16 - i)), 0);
}

export function html(body: string, status = 200): HttpResponse {
  return { status, headers: { 'content-type': 'text/html; charset=utf-8' }, body };
}

export function text(body: string, status = 200): HttpResponse {
  return { status, headers: { 'content-type': 'text/plain; charset=utf-8' }, body };
}

export function json(value: unknown, status = 200): HttpResponse {
  return { status, headers: { 'content-type': 'application/json; charset=utf-8' }, body: `${JSON.stringify(value, null, 2)}\n` };
}
