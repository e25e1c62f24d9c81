/**
 * How the ClickHouse dialect reaches an engine: a server or cluster over
 * HTTP(S) through `@clickhouse/client`, or the engine in-process through the
 * `chdb` package (tests, the demo, a single machine). Both answer in
 * JSONEachRow with the same output settings, so rows look alike.
 */
import type { ChQuery } from './sql.js';

export interface ClickHouseConnection {
  /** Which kind of connection, for logs and messages. */
  readonly kind: 'server' | 'embedded';
  /** Runs one read statement and returns its rows. */
  query<Row>(query: ChQuery): Promise<Row[]>;
  /** Runs one statement without rows (DDL, `insert ... select`). */
  command(query: ChQuery): Promise<void>;
  /** Inserts rows given as objects keyed by column name. */
  insert(table: string, rows: Array<Record<string, unknown>>): Promise<void>;
  close(): Promise<void>;
}

/**
 * Output settings both connections apply: 64-bit integers as JSON numbers
 * (exact up to 2^53, far above any count here), named tuples as objects.
 */
export const OUTPUT_SETTINGS = {
  output_format_json_quote_64bit_integers: 0,
  output_format_json_named_tuples_as_objects: 1,
} as const;

/** Splits JSONEachRow text into rows. */
export function parseRows<Row>(text: string): Row[] {
  return text
    .split('\n')
    .filter((line) => line.length > 0)
    .map((line) => JSON.parse(line) as Row);
}
