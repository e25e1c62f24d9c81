/**
 * Database errors as they may be shown (readiness, the runs table, the
 * status page): what went wrong, never who or where. Driver messages name
 * the user ("password authentication failed for user ..."), the host
 * ("getaddrinfo ENOTFOUND db.internal"), its address and port, and
 * sometimes a whole connection string; the logs keep the original.
 */

/** Plain words for the failures seen most, by SQLSTATE (PostgreSQL manual, appendix A "Error Codes") or Node.js system error code. */
const KNOWN: Record<string, string> = {
  ECONNREFUSED: 'connection refused',
  ENOTFOUND: 'host name not found',
  EAI_AGAIN: 'host name lookup failed',
  ETIMEDOUT: 'connection timed out',
  ECONNRESET: 'connection reset',
  EHOSTUNREACH: 'host unreachable',
  ENETUNREACH: 'network unreachable',
  '28P01': 'authentication failed',
  '28000': 'connection not authorised',
  '3D000': 'database does not exist',
  '53300': 'too many connections',
  '57P01': 'the server is shutting down',
  '57P02': 'the server is shutting down',
  '57P03': 'the server is not accepting connections yet',
  '57014': 'statement cancelled (timeout)',
  '55P03': 'lock not available (timeout)',
  '25P03': 'idle in transaction too long (timeout)',
};

/** Quoted names, addresses, ports and URLs inside a message. */
const SCRUBS: Array<[RegExp, string]> = [
  [/\b[a-z][a-z0-9+.-]*:\/\/\S+/gi, '[address]'],
  [/\b(user|role|host|database|for)\s+"[^"]*"/gi, '$1 [name]'],
  [/\b\d{1,3}(\.\d{1,3}){3}(:\d+)?\b/g, '[address]'],
  [/\[?\b[0-9a-f]{0,4}(:[0-9a-f]{0,4}){2,7}\]?(:\d+)?/gi, '[address]'],
  [/\b(getaddrinfo|connect)\s+(\w+)\s+\S+/g, '$1 $2 [address]'],
  [/\b[a-z0-9-]+(\.[a-z0-9-]+)+:\d+\b/gi, '[address]'],
];

/** Longest description kept. */
const MAX_CHARS = 300;

/** A database error described without credentials, user, host or database names. */
export function describeDatabaseError(error: unknown): string {
  const code = typeof error === 'object' && error !== null && 'code' in error ? String((error as { code: unknown }).code) : undefined;
  if (code !== undefined && KNOWN[code] !== undefined) return `${KNOWN[code]} (${code})`;
  const message = error instanceof Error ? error.message : String(error);
  return scrubDatabaseText(message).slice(0, MAX_CHARS) + (code !== undefined ? ` (${code})` : '');
}

/** Text that may quote a connection (a stored error): names, addresses and URLs replaced. */
export function scrubDatabaseText(text: string): string {
  return SCRUBS.reduce((result, [pattern, replacement]) => result.replace(pattern, replacement), text);
}
