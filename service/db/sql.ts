/**
 * SQL building blocks. Every query in plumbline is a function returning a
 * `Query`: values always travel as `$n` parameters, and identifiers that come
 * from configuration (schema, table, column names) pass through `quoteIdent`
 * exactly once, here.
 */
import type pg from 'pg';

/** A pool or a client inside a transaction. */
export type Db = pg.Pool | pg.ClientBase;

export interface Query {
  text: string;
  values: unknown[];
}

/** Quotes one identifier per the PostgreSQL lexical rules (double quotes, doubled inside). */
export function quoteIdent(name: string): string {
  if (name.length === 0) throw new Error('an SQL identifier cannot be empty');
  if (name.includes('\u0000')) throw new Error('an SQL identifier cannot contain a NUL character');
  return `"${name.replaceAll('"', '""')}"`;
}

/** Quotes a possibly schema-qualified name such as `analytics.events`. */
export function quoteQualified(name: string): string {
  return name.split('.').map(quoteIdent).join('.');
}

/**
 * Collects parameter values while a query is assembled: `p.add(v)` returns the
 * placeholder (`$1`, `$2`, ...) for v.
 */
export class Params {
  readonly values: unknown[] = [];
  add(value: unknown): string {
    this.values.push(value);
    return `$${this.values.length}`;
  }
}
