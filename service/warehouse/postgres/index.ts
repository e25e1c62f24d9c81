/**
 * The PostgreSQL engine of the warehouse seam: today's statements, run read
 * only through `pg` with the rollup's session settings.
 */
import type pg from 'pg';
import type { FlowDefinition } from '../../../checks/types.js';
import type { Query } from '../../db/sql.js';
import { withReadOnly } from '../../db/tx.js';
import type { DayRange, Warehouse } from '../engine.js';
import type { WarehouseMapping } from '../mapping.js';
import { limited, toEventCountRow, toFlowRows, toHourCountRow, toParamProfileRow, toProbeCountRow, type RawCountRow, type RawFlowRow, type RawHourRow, type RawParamRow, type RawProbeRow } from '../rows.js';
import { flowQuery } from './flow.js';
import { dayBoundsQuery, eventCountsQuery, hourCountsQuery, paramProfileQuery, probeCountsQuery } from './statements.js';

export interface PostgresSettings {
  /** PostgreSQL work_mem for the rollup statements, e.g. '256MB'. */
  workMem: string;
  /** Longest a statement may run, in seconds. */
  statementTimeoutSeconds: number;
}

export class PostgresWarehouse implements Warehouse {
  readonly engine = 'postgres' as const;

  constructor(
    /** The warehouse's pool, its own even when the state lives on the same server. */
    readonly pool: pg.Pool,
    readonly mapping: WarehouseMapping,
    readonly settings: PostgresSettings,
  ) {}

  async dayBounds(day: string, timezone: string): Promise<DayRange> {
    return (await this.read<DayRange>(dayBoundsQuery(day, timezone)))[0]!;
  }

  async eventCounts(range: DayRange, keep: string[]) {
    return limited(await this.read<RawCountRow>(eventCountsQuery(this.mapping, range, keep)), this.mapping, ['event_names', 'versions', 'dimension_values'], toEventCountRow);
  }

  async hourCounts(range: DayRange, events: string[]) {
    return (await this.read<RawHourRow>(hourCountsQuery(this.mapping, range, events))).map(toHourCountRow);
  }

  async paramProfiles(range: DayRange, events: string[], untrackedKeys: string[]) {
    return limited(await this.read<RawParamRow>(paramProfileQuery(this.mapping, range, events, untrackedKeys)), this.mapping, ['param_keys', 'versions'], toParamProfileRow);
  }

  async flow(flow: FlowDefinition, range: DayRange) {
    return toFlowRows(await this.read<RawFlowRow>(flowQuery(this.mapping, flow, range)));
  }

  async probeCounts(days: Array<{ day: string } & DayRange>) {
    return (await this.read<RawProbeRow>(probeCountsQuery(this.mapping, days))).map(toProbeCountRow);
  }

  /** Runs one statement read only, with the rollup's session settings, on a connection of its own. */
  async read<Row extends pg.QueryResultRow>(query: Query): Promise<Row[]> {
    return await withReadOnly(this.pool, async (client) => {
      // JIT compilation of these wide expressions costs seconds and saves nothing on one pass over a day.
      await client.query({
        text: `select set_config('work_mem', $1, true), set_config('jit', 'off', true), set_config('statement_timeout', $2, true)`,
        values: [this.settings.workMem, `${this.settings.statementTimeoutSeconds}s`],
      });
      const { rows } = await client.query<Row>(query);
      return rows;
    });
  }

  async close(): Promise<void> {
    await this.pool.end();
  }
}
