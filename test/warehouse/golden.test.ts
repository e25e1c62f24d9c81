/**
 * Golden SQL: every warehouse statement of both dialects, built for one fixed
 * mapping, day and set of flows, equals the text kept in golden/ (with its
 * parameter values), so a change to a statement shows up in review as a
 * readable diff of the SQL the engines will run. After a deliberate change:
 * `UPDATE_GOLDEN=1 npx vitest run test/warehouse/golden.test.ts`, then read
 * the diff.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import type { EventsTable } from '../../service/warehouse/clickhouse/columns.js';
import * as clickhouseFlow from '../../service/warehouse/clickhouse/flow.js';
import * as clickhouse from '../../service/warehouse/clickhouse/statements.js';
import { flowQuery } from '../../service/warehouse/postgres/flow.js';
import * as postgres from '../../service/warehouse/postgres/statements.js';
import { testMapping } from '../helpers/warehouse.js';

const GOLDEN = join(dirname(fileURLToPath(import.meta.url)), 'golden');
const mapping = testMapping('analytics');
const range = { lo: new Date('2026-03-08T05:00:00Z'), hi: new Date('2026-03-09T04:00:00Z') };
const days = [{ day: '2026-03-07', lo: new Date('2026-03-07T05:00:00Z'), hi: range.lo }, { day: '2026-03-08', ...range }];

function flow(entry: FlowDefinition['entry'], steps: FlowDefinition['steps']): FlowDefinition {
  return { id: 'pass', owner: 'team', steps, conversionWindowSeconds: 1800, stepTimeCapSeconds: 300, entry, platforms: ['web', 'android', 'ios'], events: [], contracts: {} };
}
/** Steps that never match the same event, and steps that can (any screen, then one screen). */
const exclusive = flow('first_step_only', [
  { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
  { name: 'zone', event: 'screen_shown', where: { view: ['zone_picker', 'zone_v2'] } },
  { name: 'done', event: 'pass_purchase_result', where: { outcome: 'approved', test: false } },
]);
const overlapping = flow('any_step', [
  { name: 'screen', event: 'screen_shown', where: {} },
  { name: 'zone', event: 'screen_shown', where: { view: 'zone_picker' } },
  { name: 'pay', event: 'tap_pay', where: {} },
]);
// The demo's column types; the params column as JSON text.
const table: EventsTable = {
  mapping,
  types: new Map([
    ['occurred_at', "DateTime64(6, 'UTC')"],
    ['event_name', 'LowCardinality(String)'],
    ['user_id', 'Nullable(String)'],
    ['device_id', 'UInt64'],
    ['platform', 'LowCardinality(Nullable(String))'],
    ['app_version', 'LowCardinality(Nullable(String))'],
    ['props', 'Nullable(String)'],
    ['country', 'LowCardinality(Nullable(String))'],
    ['channel', 'Enum8(\'direct\' = 1, \'email\' = 2)'],
  ]),
};

const statements: Record<string, Record<string, { text: string; values: unknown }>> = {
  postgres: Object.fromEntries(
    Object.entries({
      day_bounds: postgres.dayBoundsQuery('2026-03-08', 'America/New_York'),
      event_counts: postgres.eventCountsQuery(mapping, range),
      hour_counts: postgres.hourCountsQuery(mapping, range, ['pass_purchase_result', 'zone_selected']),
      probe_counts: postgres.probeCountsQuery(mapping, days),
      param_profiles: postgres.paramProfileQuery(mapping, range, ['pass_purchase_result', 'zone_selected'], ['pass_purchase_result.amount_cents']),
      flow_exclusive_steps: flowQuery(mapping, exclusive, range),
      flow_overlapping_steps: flowQuery(mapping, overlapping, range),
    }).map(([name, query]) => [name, { text: query.text, values: query.values }]),
  ),
  clickhouse: Object.fromEntries(
    Object.entries({
      day_bounds: clickhouse.dayBoundsQuery('2026-03-08', 'America/New_York'),
      event_counts: clickhouse.eventCountsQuery(table, range),
      hour_counts: clickhouse.hourCountsQuery(table, range, ['pass_purchase_result', 'zone_selected']),
      probe_counts: clickhouse.probeCountsQuery(table, days),
      param_profiles: clickhouse.paramProfileQuery(table, range, ['pass_purchase_result', 'zone_selected'], ['pass_purchase_result.amount_cents']),
      funnel_exclusive_steps: clickhouseFlow.funnelQuery(table, exclusive, range),
      step_counts_exclusive_steps: clickhouseFlow.stepCountsQuery(table, exclusive, range),
      funnel_overlapping_steps: clickhouseFlow.funnelQuery(table, overlapping, range),
    }).map(([name, query]) => [name, { text: query.text, values: query.params }]),
  ),
};

describe.each(Object.keys(statements))('golden SQL of the %s dialect', (dialect) => {
  for (const [name, query] of Object.entries(statements[dialect]!)) {
    it(name, () => {
      const file = join(GOLDEN, dialect, `${name}.sql`);
      const rendered = `${query.text.trim()}\n\n-- values: ${JSON.stringify(query.values)}\n`;
      if (process.env.UPDATE_GOLDEN) {
        mkdirSync(dirname(file), { recursive: true });
        writeFileSync(file, rendered);
      }
      expect(existsSync(file), `${file} is missing: run with UPDATE_GOLDEN=1 to write it`).toBe(true);
      expect(rendered).toBe(readFileSync(file, 'utf8'));
    });
  }
});
