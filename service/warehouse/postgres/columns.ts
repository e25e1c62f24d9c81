/**
 * Column expressions shared by every PostgreSQL statement: the mapping from
 * the team's table to our roles. Text roles carry the "C" collation: equality
 * is unchanged, and sorts on them (grouping, ordered aggregates) compare bytes
 * instead of calling the server's locale, which is several times slower.
 */
import { quoteIdent, quoteQualified, type Params } from '../../db/sql.js';
import { UNMAPPED_PLATFORM, type WarehouseMapping } from '../mapping.js';

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
    return `(${this.col('name')}::text collate "C")`;
  }
  /**
   * A person is the signed-in user, falling back to the device; prefixed so ids of both kinds never collide.
   * An empty or blank id (spaces, tabs, line breaks) is no id: otherwise every device without a user would be one person.
   */
  get person(): string {
    const id = (role: 'user' | 'device', prefix: string) => `case when btrim(${this.col(role)}::text, E' \\t\\r\\n') <> '' then '${prefix}' || ${this.col(role)}::text end`;
    return `(coalesce(${id('user', 'u:')}, ${id('device', 'd:')}) collate "C")`;
  }
  get version(): string {
    return `(coalesce(${this.col('version')}::text, '') collate "C")`;
  }
  get props(): string {
    return this.col('params');
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
    return `(coalesce(e.${quoteIdent(name)}::text, '') collate "C")`;
  }
  get table(): string {
    return `${quoteQualified(this.mapping.table)} e`;
  }
}
