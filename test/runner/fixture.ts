/**
 * A small plumbline setup against the test database for the runner, scheduler
 * and HTTP suites: an events table with a few events on each given day, a
 * fresh state schema, the example config pointed at them, and Runtimes opened
 * on demand (each with its own pools, as two replicas would have).
 */
import { Writable } from 'node:stream';
import { pino } from 'pino';
import { registry } from '../../checks/registry.js';
import { loadConfig, type LoadedConfig } from '../../service/config/load.js';
import { quoteIdent } from '../../service/db/sql.js';
import { projectPath } from '../../service/paths.js';
import { openRuntime, type Runtime } from '../../service/runtime.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { createEventsTable, insertEvents, TEST_PLATFORMS, type RawEvent } from '../helpers/warehouse.js';

export interface RunnerFixture {
  url: string;
  warehouse: TestSchema;
  state: TestSchema;
  config: LoadedConfig;
  /** Every log line written by the Runtimes opened here, parsed. */
  logs(): Array<Record<string, unknown>>;
  /** The raw log text, to look for anything that must never be logged. */
  logText(): string;
  open(): Promise<Runtime>;
  /** How many `judge` runs (one per day, every flow) judged each (flow, day), and its verdict. */
  judgeCounts(): Promise<Array<{ flow: string; day: string; runs: number; verdict: string | null }>>;
  drop(): Promise<void>;
}

export async function createRunnerFixture(options: { days: string[]; catchUpDays: number }): Promise<RunnerFixture> {
  const warehouse = await createTestSchema('wh');
  const state = await createTestSchema('st');
  await createEventsTable(warehouse.pool, warehouse.schema);
  await insertEvents(warehouse.pool, warehouse.schema, options.days.flatMap(eventsOf));

  const config = loadConfig(projectPath('config'), { env: {} });
  config.main.warehouse.events_table = `${warehouse.schema}.events`;
  config.main.warehouse.platforms = TEST_PLATFORMS;
  config.main.state.schema = state.schema;
  config.main.schedule.catch_up_days = options.catchUpDays;
  // Checks come and go in the registry; these suites test scheduling, so every (flow, day) must end `judged`.
  for (const flow of config.flows) {
    for (const check of registry) (flow.config.checks[check.id] as { enabled: boolean }).enabled = false;
  }

  const lines: string[] = [];
  const sink = new Writable({
    write(chunk: Buffer, _encoding, done) {
      lines.push(...chunk.toString('utf8').split('\n').filter(Boolean));
      done();
    },
  });
  const log = pino({ level: 'info', base: { service: 'plumbline' } }, sink);
  const opened: Runtime[] = [];

  return {
    url: warehouse.url,
    warehouse,
    state,
    config,
    logs: () => lines.map((line) => JSON.parse(line) as Record<string, unknown>),
    logText: () => lines.join('\n'),
    async open() {
      const env = { PLUMBLINE_WAREHOUSE_URL: warehouse.url, PLUMBLINE_STATE_URL: warehouse.url };
      const rt = await openRuntime(config, { env, log, poolSize: 4 });
      opened.push(rt);
      return rt;
    },
    async judgeCounts() {
      const s = quoteIdent(state.schema);
      const { rows } = await state.pool.query<{ flow: string; day: string; runs: number; verdict: string | null }>(
        `select j.flow, to_char(j.day, 'YYYY-MM-DD') as day, count(r.id)::int as runs, j.verdict
         from ${s}.judged_days j left join ${s}.runs r on r.kind = 'judge' and r.day = j.day
         group by j.flow, j.day, j.verdict order by j.day, j.flow`,
      );
      return rows;
    },
    async drop() {
      for (const rt of opened) await rt.close().catch(() => undefined);
      await warehouse.drop();
      await state.drop();
    },
  };
}

/** A few people on each platform entering the monthly pass flow around local noon. */
function eventsOf(day: string): RawEvent[] {
  const events: RawEvent[] = [];
  for (const [platform, raw] of [['web', 'web'], ['android', 'Android'], ['ios', 'iOS']] as const) {
    for (let person = 0; person < 3; person++) {
      events.push({
        at: new Date(`${day}T17:0${person}:00Z`),
        name: 'screen_shown',
        user: `${platform}-${day}-${person}`,
        device: null,
        platform: raw,
        version: platform === 'web' ? null : '7.1.0',
        props: { view: 'pass_intro' },
        country: 'US',
        channel: 'direct',
      });
    }
  }
  return events;
}
