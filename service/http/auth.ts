/**
 * Who may see the pages: anyone who can reach the port (the default, which
 * listens on this machine only), or, with `http.auth`, a request carrying the
 * bearer token (RFC 6750 section 2.1) or the basic credentials (RFC 7617).
 * The probes (/healthz, /readyz) never ask: the platform calls them without
 * credentials.
 */
import { createHash, timingSafeEqual } from 'node:crypto';
import type { IncomingHttpHeaders } from 'node:http';
import { resolveReference } from '../config/load.js';
import type { MainConfig } from '../config/schema.js';

/** Paths answered without credentials. */
export const OPEN_PATHS: ReadonlySet<string> = new Set(['/healthz', '/readyz']);

export interface PageGuard {
  allows(headers: IncomingHttpHeaders): boolean;
  /** The `WWW-Authenticate` challenge of a 401. */
  challenge: string;
}

/** Compares digests, so the time taken says nothing about how much of a guess was right. */
function same(given: string, expected: string): boolean {
  const digest = (text: string) => createHash('sha256').update(text, 'utf8').digest();
  return timingSafeEqual(digest(given), digest(expected));
}

/** The configured guard, or undefined when the pages are open. Throws when a referenced secret is empty (a deployment mistake). */
export function pageGuard(main: Pick<MainConfig, 'http'>, env: NodeJS.ProcessEnv): PageGuard | undefined {
  const auth = main.http.auth;
  if (!auth) return undefined;
  const token = auth.token !== undefined ? resolveReference(auth.token, env) : undefined;
  const password = auth.password !== undefined ? resolveReference(auth.password, env) : undefined;
  if (auth.token !== undefined && token === undefined) throw new Error(`http.auth.token: ${auth.token} is empty; the pages would be open`);
  if (auth.password !== undefined && password === undefined) throw new Error(`http.auth.password: ${auth.password} is empty; the pages would be open`);
  const basic = auth.user !== undefined && password !== undefined ? `${auth.user}:${password}` : undefined;
  const challenges = [...(basic !== undefined ? ['Basic realm="plumbline", charset="UTF-8"'] : []), ...(token !== undefined ? ['Bearer realm="plumbline"'] : [])];
  return {
    challenge: challenges.join(', '),
    allows(headers) {
      const header = headers.authorization;
      if (header === undefined) return false;
      const [scheme = '', ...rest] = header.trim().split(/\s+/);
      const credentials = rest.join(' ');
      if (token !== undefined && scheme.toLowerCase() === 'bearer') return same(credentials, token);
      if (basic !== undefined && scheme.toLowerCase() === 'basic') return same(Buffer.from(credentials, 'base64').toString('utf8'), basic);
      return false;
    },
  };
}
