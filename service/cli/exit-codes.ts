/** Process exit codes, documented in the README. */
export const EXIT = {
  ok: 0,
  /** `validate --strict` found warnings only. */
  warnings: 1,
  /** The configuration is invalid: every problem is printed with file, line and key. */
  config: 2,
  /** A database could not be reached or migrated. */
  database: 3,
  /** A run, rollup or delivery step failed; details are in the logs. */
  failed: 4,
  /** Wrong command-line usage. */
  usage: 64,
  /** A bug: plumbline itself failed unexpectedly. */
  internal: 70,
} as const;

/** Socket-level failures of a database connection (Node's error codes). */
const CONNECTION_CODES = new Set(['ECONNREFUSED', 'ECONNRESET', 'ETIMEDOUT', 'EPIPE', 'ENOTFOUND', 'EHOSTUNREACH', 'ENETUNREACH', 'EAI_AGAIN']);

/**
 * True for a failure of the databases rather than of plumbline: an error a
 * PostgreSQL server sent (it carries a five-character SQLSTATE), a lost or
 * refused connection, a connection timeout, or an error of a ClickHouse
 * server or of the in-process engine ("Code: N. DB::Exception ..."). These
 * exit 4 (`failed`): the run did not complete and the logs say why; 70 is
 * kept for plumbline's own bugs.
 */
export function isDatabaseFailure(error: unknown): boolean {
  if (!(error instanceof Error)) return false;
  const code = (error as { code?: unknown }).code;
  if (typeof code === 'string' && (/^[0-9A-Z]{5}$/.test(code) || CONNECTION_CODES.has(code))) return true;
  if (error.constructor.name === 'ClickHouseError') return true;
  if (/^Code: \d+\./.test(error.message) || /DB::Exception/.test(error.message)) return true;
  if (/^(Connection terminated|timeout exceeded when trying to connect|Query read timeout)/i.test(error.message)) return true;
  return error.cause !== undefined && error.cause !== error && isDatabaseFailure(error.cause);
}

export class ExitError extends Error {
  constructor(
    readonly code: number,
    message: string,
  ) {
    super(message);
  }
}
