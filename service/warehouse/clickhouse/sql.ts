/**
 * ClickHouse statements as values: `{ text, params }`, every value a typed
 * server-side parameter (`{p1:String}`), never spliced into the text;
 * identifiers from the configuration pass through `quoteIdent` exactly once,
 * as for PostgreSQL (ClickHouse reads double-quoted identifiers the same way).
 */
export interface ChQuery {
  text: string;
  params: Record<string, unknown>;
}

/** Collects parameters while a statement is assembled: `p.add(v, 'String')` returns `{p1:String}`. */
export class ChParams {
  readonly values: Record<string, unknown> = {};
  private count = 0;
  add(value: unknown, type: string): string {
    const name = `p${++this.count}`;
    this.values[name] = value;
    return `{${name}:${type}}`;
  }
  /** An instant as a DateTime64 with microseconds in UTC, the precision PostgreSQL keeps. */
  instant(value: Date): string {
    return this.add(value.toISOString().replace('T', ' ').replace('Z', ''), "DateTime64(6, 'UTC')");
  }
  /** An instant as microseconds since the epoch, for arithmetic with `Columns.micros`. */
  micros(value: Date): string {
    return this.add(value.getTime() * 1000, 'Int64');
  }
}
