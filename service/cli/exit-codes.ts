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

export class ExitError extends Error {
  constructor(
    readonly code: number,
    message: string,
  ) {
    super(message);
  }
}
