/**
 * A Metro Pass warehouse with months of journeys through the monthly pass
 * flow on web, Android and iOS, generated inside PostgreSQL, and the example
 * configuration narrowed to that flow and pointed at it: for suites that run
 * the pipeline over long ranges (silences, backfills).
 */
import type pg from 'pg';
import { loadConfig, type LoadedConfig } from '../../service/config/load.js';
import { quoteIdent } from '../../service/db/sql.js';
import { projectPath } from '../../service/paths.js';
import { createEventsTable, TEST_PLATFORMS } from '../helpers/warehouse.js';

export const FLOW = 'monthly_pass';

/**
 * `people` journeys a day on each platform, spread evenly over the local day
 * (America/New_York); each goes intro -> zone -> rider -> review -> done and
 * stops early with fixed shares (15% after intro, 15% after zone, ...), drawn
 * from a hash so reruns give the same rows. On the days of `androidWithoutRider`,
 * Android sends no rider step (a broken tracking call).
 */
export async function insertJourneys(
  pool: pg.Pool,
  schema: string,
  range: { from: string; to: string },
  options: { people?: number; androidWithoutRider?: { from: string; to: string } } = {},
): Promise<void> {
  const broken = options.androidWithoutRider ?? { from: '1900-01-01', to: '1900-01-01' };
  await pool.query({
    text: `insert into ${quoteIdent(schema)}.events (occurred_at, event_name, user_id, device_id, platform, app_version, props, country, channel)
      select j.at + k.step * interval '30 seconds', k.name, j.platform || '-' || j.day || '-' || j.person, null, j.platform,
        case when j.platform = 'web' then null else '7.1.0' end, k.props, 'US', 'direct'
      from (
        select d::date as day, p.platform, i as person,
          (d::date::timestamp + (i - 1) * (1440.0 / $3) * interval '1 minute') at time zone 'America/New_York' as at,
          abs(hashtext(d::date::text || p.platform || i::text)) % 100 as h
        from generate_series($1::date, $2::date, interval '1 day') d, unnest(array['web', 'Android', 'iOS']) p(platform), generate_series(1, $3::int) i
      ) j
      cross join lateral (values
        (0, 'screen_shown', '{"view": "pass_intro"}'::jsonb),
        (1, 'screen_shown', '{"view": "zone_picker"}'::jsonb),
        (2, 'screen_shown', '{"view": "rider_details"}'::jsonb),
        (3, 'screen_shown', '{"view": "pay_review"}'::jsonb),
        (4, 'pass_purchase_result', '{"outcome": "approved", "amount_cents": 9000, "pass_type": "monthly"}'::jsonb)
      ) k(step, name, props)
      where k.step <= case when j.h < 15 then 0 when j.h < 30 then 1 when j.h < 40 then 2 when j.h < 55 then 3 else 4 end
        and not (j.platform = 'Android' and k.step = 2 and j.day between $4::date and $5::date)`,
    values: [range.from, range.to, options.people ?? 80, broken.from, broken.to],
  });
}

/** The example configuration on the test schemas, the monthly pass flow only, no calendar. */
export async function journeyConfig(pool: pg.Pool, warehouseSchema: string, stateSchema: string): Promise<LoadedConfig> {
  await createEventsTable(pool, warehouseSchema);
  const config = loadConfig(projectPath('config'), { env: {} });
  config.main.warehouse.events_table = `${warehouseSchema}.events`;
  config.main.warehouse.platforms = TEST_PLATFORMS;
  config.main.state.schema = stateSchema;
  config.main.calendar = [];
  config.flows = config.flows.filter(({ config: flow }) => flow.flow === FLOW);
  for (const { config: flow } of config.flows) flow.calendar = [];
  return config;
}
