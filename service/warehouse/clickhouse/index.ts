/**
 * The ClickHouse engine of the warehouse seam: the ClickHouse dialect of
 * every statement, run on a server (`@clickhouse/client`) or in-process
 * (`chdb`). Only the rollup rows leave the engine.
 */
import type { FlowDefinition } from '../../../checks/types.js';
import { quoteQualified } from '../../db/sql.js';
import type { DayRange, Warehouse } from '../engine.js';
import type { WarehouseMapping } from '../mapping.js';
import { limited, toEventCountRow, toFlowRows, toHourCountRow, toParamProfileRow, toProbeCountRow, type RawCountRow, type RawFlowRow, type RawHourRow, type RawParamRow, type RawProbeRow } from '../rows.js';
import type { EventsTable } from './columns.js';
import type { ClickHouseConnection } from './connection.js';
import { funnelQuery, stepCountsQuery } from './flow.js';
import { dayBoundsQuery, eventCountsQuery, hourCountsQuery, paramProfileQuery, probeCountsQuery } from './statements.js';

export class ClickHouseWarehouse implements Warehouse {
  readonly engine = 'clickhouse' as const;
  private table: Promise<EventsTable> | undefined;

  constructor(
    readonly connection: ClickHouseConnection,
    readonly mapping: WarehouseMapping,
  ) {}

  async dayBounds(day: string, timezone: string): Promise<DayRange> {
    const [row] = await this.connection.query<{ lo: number; hi: number }>(dayBoundsQuery(day, timezone));
    return { lo: new Date(row!.lo), hi: new Date(row!.hi) };
  }

  async eventCounts(range: DayRange, keep: string[]) {
    const rows = await this.connection.query<RawCountRow>(eventCountsQuery(await this.eventsTable(), range, keep));
    return limited(rows, this.mapping, ['event_names', 'versions', 'dimension_values'], toEventCountRow);
  }

  async hourCounts(range: DayRange, events: string[]) {
    const rows = await this.connection.query<RawHourRow>(hourCountsQuery(await this.eventsTable(), range, events));
    return rows.map(toHourCountRow);
  }

  async paramProfiles(range: DayRange, events: string[], untrackedKeys: string[]) {
    const rows = await this.connection.query<RawParamRow>(paramProfileQuery(await this.eventsTable(), range, events, untrackedKeys));
    return limited(rows, this.mapping, ['param_keys', 'versions'], toParamProfileRow);
  }

  async flow(flow: FlowDefinition, range: DayRange) {
    const table = await this.eventsTable();
    const funnel = await this.connection.query<RawFlowRow>(funnelQuery(table, flow, range));
    const steps = await this.connection.query<RawFlowRow>(stepCountsQuery(table, flow, range));
    return toFlowRows([...funnel, ...steps]);
  }

  async probeCounts(days: Array<{ day: string } & DayRange>) {
    if (days.length === 0) return [];
    const rows = await this.connection.query<RawProbeRow>(probeCountsQuery(await this.eventsTable(), days));
    return rows.map(toProbeCountRow);
  }

  async close(): Promise<void> {
    await this.connection.close();
  }

  /** Reads the events table's column types once (they decide how each column is read); every mapped column must exist. */
  private eventsTable(): Promise<EventsTable> {
    this.table ??= this.describe().catch((error: unknown) => {
      this.table = undefined;
      throw error;
    });
    return this.table;
  }

  private async describe(): Promise<EventsTable> {
    const columns = await this.connection.query<{ name: string; type: string }>({ text: `describe table ${quoteQualified(this.mapping.table)}`, params: {} });
    const types = new Map(columns.map((column) => [column.name, column.type]));
    const wanted = [...Object.entries(this.mapping.columns).map(([role, name]) => ({ key: `warehouse.columns.${role}`, name })), ...this.mapping.dimensions.map((name) => ({ key: 'warehouse.dimensions', name }))];
    const missing = wanted.filter((column) => !types.has(column.name));
    if (missing.length > 0) {
      throw new Error(
        `${this.mapping.table} has no column ${missing.map((m) => `${m.name} (${m.key})`).join(', ')}; it has ${[...types.keys()].join(', ')}`,
      );
    }
    return { mapping: this.mapping, types };
  }
}
