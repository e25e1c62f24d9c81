/**
 * Column expressions shared by every PostgreSQL statement: the mapping from
 * the team's table to our roles. Text roles carry the "C" collation: equality
 * is unchanged, and sorts on them (grouping, ordered aggregates) compare bytes
 * instead of calling the server's locale, which is several times slower.
 */
import { quoteIdent, quoteQualified, type Params } from '../../db/sql.js';
import { ALL_VERSIONS, CUT_MARKER, DOUBLE_OVERFLOW, TEXT_KEY_MAX_LENGTH, UNMAPPED_PLATFORM, type WarehouseMapping } from '../mapping.js';

/** `text` cut to TEXT_KEY_MAX_LENGTH characters, the last one the cut marker, when longer. */
export function cutText(text: string): string {
  return `case when length(${text}) > ${TEXT_KEY_MAX_LENGTH} then left(${text}, ${TEXT_KEY_MAX_LENGTH - 1}) || '${CUT_MARKER}' else ${text} end`;
}

/** A jsonpath finding a number beyond double precision anywhere in a JSON value. */
const OVERFLOW_PATH = `lax $.** ? (@.type() == "number" && (@ >= ${DOUBLE_OVERFLOW} || @ <= -${DOUBLE_OVERFLOW}))`;

export class Columns {
  constructor(
    readonly mapping: WarehouseMapping,
    readonly params: Params,
  ) {}
  col(role: keyof WarehouseMapping['columns']): string {
    return `e.${quoteIdent(this.mapping.columns[role])}`;
  }
  get time(): string {
    return this.col('time');
  }
  get name(): string {
    return `(${cutText(`${this.col('name')}::text`)} collate "C")`;
  }
  /** False for rows without a usable event name (null, empty or blank): they are set aside. */
  get named(): string {
    return `coalesce(btrim(${this.col('name')}::text, E' \\t\\r\\n') <> '', false)`;
  }
  /**
   * A person is the signed-in user, falling back to the device; prefixed so ids of both kinds never collide.
   * An empty or blank id (spaces, tabs, line breaks) is no id: otherwise every device without a user would be one person.
   */
  get person(): string {
    const id = (role: 'user' | 'device', prefix: string) => `case when btrim(${this.col(role)}::text, E' \\t\\r\\n') <> '' then '${prefix}' || ${this.col(role)}::text end`;
    return `(coalesce(${id('user', 'u:')}, ${id('device', 'd:')}) collate "C")`;
  }
  /** The version; one equal to the all-versions marker reads as no version. */
  get version(): string {
    const raw = `coalesce(${this.col('version')}::text, '')`;
    return `(case when ${raw} = '${ALL_VERSIONS}' then '' else ${cutText(raw)} end collate "C")`;
  }
  /** The parameter object, or null when it holds a number beyond double precision (see BAD_ROW_REASONS). */
  get props(): string {
    return `(case when ${this.overflows} then null else ${this.col('params')} end)`;
  }
  /** True when the parameters hold a number beyond double precision. */
  get overflows(): string {
    return `coalesce(jsonb_path_exists(${this.col('params')}, '${OVERFLOW_PATH}'), false)`;
  }
  /** The row's first reason among BAD_ROW_REASONS (null: a good row); parameter reasons only for `watched` events. */
  badRowReason(watched: string): string {
    const raw = (role: 'name' | 'version') => `coalesce(${this.col(role)}::text, '')`;
    const long = [raw('name'), raw('version'), ...this.mapping.dimensions.map((d) => `coalesce(e.${quoteIdent(d)}::text, '')`)].map((t) => `length(${t}) > ${TEXT_KEY_MAX_LENGTH}`);
    const params = this.col('params');
    const longKey = `(jsonb_typeof(${params}) = 'object' and exists (select 1 from jsonb_object_keys(${params}) k where length(k) > ${TEXT_KEY_MAX_LENGTH}))`;
    return `case when not ${this.named} then 'no_event_name'
      when ${raw('version')} = '${ALL_VERSIONS}' then 'reserved_version'
      when ${long.join(' or ')} or (${watched} and coalesce(${longKey}, false)) then 'long_text'
      when ${watched} and ${this.overflows} then 'unreadable_params' end`;
  }
  get platform(): string {
    return this.platformOf(`${this.col('platform')}::text`);
  }
  /** Our platform name for a raw platform value: per row, or once per group when grouped by the raw value first. */
  platformOf(raw: string): string {
    const arms = Object.entries(this.mapping.platforms).map(([ours, values]) => `when ${raw} = any(${this.params.add(values)}::text[]) then ${this.params.add(ours)}::text`);
    return `(case ${arms.join(' ')} else ${this.params.add(UNMAPPED_PLATFORM)}::text end collate "C")`;
  }
  dimension(name: string): string {
    return `(${cutText(`coalesce(e.${quoteIdent(name)}::text, '')`)} collate "C")`;
  }
  get table(): string {
    return `${quoteQualified(this.mapping.table)} e`;
  }
}
