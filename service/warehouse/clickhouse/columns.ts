/**
 * Column expressions shared by every ClickHouse statement: the mapping from
 * the team's table to our roles, with the meaning the PostgreSQL dialect
 * gives them. Strings compare as bytes in ClickHouse, so grouping, `min` and
 * sorting agree with PostgreSQL's "C" collation without saying so. String
 * columns (also LowCardinality and Nullable ones) are used as they are, so
 * ClickHouse can work on a LowCardinality column's dictionary; other types
 * are turned into text first, as PostgreSQL's `::text` does.
 */
import { quoteIdent, quoteQualified } from '../../db/sql.js';
import { ALL_VERSIONS, CUT_MARKER, TEXT_KEY_MAX_LENGTH, UNMAPPED_PLATFORM, type WarehouseMapping } from '../mapping.js';

/** `text` cut to TEXT_KEY_MAX_LENGTH characters (code points, as PostgreSQL counts them), the last one the cut marker, when longer. */
export function cutText(text: string): string {
  return `if(lengthUTF8(${text}) > ${TEXT_KEY_MAX_LENGTH}, concat(leftUTF8(${text}, ${TEXT_KEY_MAX_LENGTH - 1}), '${CUT_MARKER}'), ${text})`;
}
import type { ChParams } from './sql.js';

/** The team's events table: its mapping, and its column types by name as `describe table` gives them. */
export interface EventsTable {
  mapping: WarehouseMapping;
  types: ReadonlyMap<string, string>;
}

export class Columns {
  readonly mapping: WarehouseMapping;
  readonly types: ReadonlyMap<string, string>;
  constructor(
    table: EventsTable,
    readonly params: ChParams,
  ) {
    this.mapping = table.mapping;
    this.types = table.types;
  }
  /** A column as text: as it is when it holds strings, through `toString` otherwise. */
  text(column: string): string {
    const expression = `e.${quoteIdent(column)}`;
    return /^(LowCardinality\()?(Nullable\()?String\)*$/.test(this.types.get(column) ?? '') ? expression : `toString(${expression})`;
  }
  role(role: keyof WarehouseMapping['columns']): string {
    return this.text(this.mapping.columns[role]);
  }
  get time(): string {
    return `e.${quoteIdent(this.mapping.columns.time)}`;
  }
  /** The time as microseconds since the epoch, whatever the column's DateTime precision. */
  get micros(): string {
    return `toUnixTimestamp64Micro(toDateTime64(${this.time}, 6, 'UTC'))`;
  }
  get name(): string {
    return cutText(this.role('name'));
  }
  /** False for rows without a usable event name (null, empty or blank): they are set aside. */
  get named(): string {
    return `coalesce(trimBoth(${this.role('name')}, ' \\t\\r\\n') != '', false)`;
  }
  /** A person is the signed-in user, falling back to the device; prefixed so ids of both kinds never collide. An empty or blank id is no id. */
  get person(): string {
    const id = (role: 'user' | 'device', prefix: string) => `if(trimBoth(${this.role(role)}, ' \\t\\r\\n') != '', concat('${prefix}', ${this.role(role)}), NULL)`;
    return `coalesce(${id('user', 'u:')}, ${id('device', 'd:')})`;
  }
  /** The version; one equal to the all-versions marker reads as no version. */
  get version(): string {
    const raw = `coalesce(${this.role('version')}, '')`;
    return `if(${raw} = '${ALL_VERSIONS}', '', ${cutText(raw)})`;
  }
  /** The row's first reason among BAD_ROW_REASONS (null: a good row); parameter reasons only for `watched` events. */
  badRowReason(watched: string): string {
    const raw = (column: string) => `coalesce(${this.text(column)}, '')`;
    const { columns, dimensions } = this.mapping;
    const long = [raw(columns.name), raw(columns.version), ...dimensions.map(raw)].map((t) => `lengthUTF8(${t}) > ${TEXT_KEY_MAX_LENGTH}`);
    const props = `coalesce(${this.props}, '')`;
    const longKey = `arrayExists(k -> lengthUTF8(k) > ${TEXT_KEY_MAX_LENGTH}, JSONExtractKeys(${props}))`;
    return `multiIf(not ${this.named}, 'no_event_name',
      ${raw(columns.version)} = '${ALL_VERSIONS}', 'reserved_version',
      ${long.join(' or ')} or (${watched} and ${longKey}), 'long_text',
      ${watched} and ${props} != '' and not isValidJSON(${props}), 'unreadable_params', NULL)`;
  }
  /** The parameter object as JSON text: the JSON type is written out, so both storages are read by the same functions. */
  get props(): string {
    const column = `e.${quoteIdent(this.mapping.columns.params)}`;
    return /^(Nullable\()?JSON\b/.test(this.types.get(this.mapping.columns.params) ?? '') ? `toJSONString(${column})` : column;
  }
  get rawPlatform(): string {
    return this.role('platform');
  }
  get platform(): string {
    return this.platformOf(this.rawPlatform);
  }
  /** Our platform name for a raw platform value (unmapped and null ones are 'other'); the first mapping of a raw value wins. */
  platformOf(raw: string): string {
    const pairs = new Map<string, string>();
    for (const [ours, values] of Object.entries(this.mapping.platforms)) for (const value of values) if (!pairs.has(value)) pairs.set(value, ours);
    const from = this.params.add([...pairs.keys()], 'Array(String)');
    const to = this.params.add([...pairs.values()], 'Array(String)');
    return `transform(${raw}, ${from}, ${to}, ${this.params.add(UNMAPPED_PLATFORM, 'String')})`;
  }
  dimension(name: string): string {
    return cutText(`coalesce(${this.text(name)}, '')`);
  }
  get table(): string {
    return `${quoteQualified(this.mapping.table)} as e`;
  }
  /** Rows of [lo, hi), through the time column itself so the table's ordering key prunes the read. */
  inRange(lo: string, hi: string): string {
    return `${this.time} >= ${lo} and ${this.time} < ${hi}`;
  }
}
