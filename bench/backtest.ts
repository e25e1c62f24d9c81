/**
 * `backtest_90d_s`: a backtest of 90 days over all demo flows, timed. The demo
 * scenario is generated, rolled up and judged once into a schema of its own
 * (as `plumbline demo` does); then `backtest` replays the last 90 days over the
 * stored rollups, `rounds` times, and the median is reported with the spread.
 */
import { randomBytes } from 'node:crypto';
import { loadConfig } from '../service/config/load.js';
import { quoteIdent } from '../service/db/sql.js';
import { prepareDemo } from '../service/demo/prepare.js';
import { createLogger } from '../service/log.js';
import { backtest } from '../service/pipeline/backtest.js';
import { openRuntime } from '../service/runtime.js';
import type { Figures } from './rollup.js';

const DAYS = 90;

export async function benchBacktest(options: { url: string; rounds: number; log: (line: string) => void }): Promise<Figures> {
  const schema = `bench_backtest_${randomBytes(4).toString('hex')}`;
  const config = loadConfig('config', { env: {} });
  config.main.warehouse.events_table = `${schema}.events`;
  config.main.state.schema = `${schema}_state`;
  config.main.delivery.outbox_dir = `.plumbline/${schema}-outbox`;
  const rt = await openRuntime(config, { env: { PLUMBLINE_WAREHOUSE_URL: options.url }, log: createLogger({ level: 'warn' }) });
  try {
    options.log(`bench: backtest: preparing the demo scenario in ${schema} ...`);
    const demo = await prepareDemo(rt, { quiet: true, dir: `.plumbline/${schema}` });
    const seconds: number[] = [];
    let findings = 0;
    let incidents = 0;
    for (let round = 0; round <= options.rounds; round++) {
      const result = await backtest(rt, { days: DAYS, to: demo.to });
      // The first round warms up (JIT, caches) and is not counted.
      if (round > 0) seconds.push(result.millis / 1000);
      findings = result.findings.length;
      incidents = result.incidents.length;
    }
    seconds.sort((a, b) => a - b);
    const median = seconds[Math.floor(seconds.length / 2)]!;
    return {
      backtest_90d_s: Number(median.toFixed(2)),
      backtest_90d_min_s: Number(seconds[0]!.toFixed(2)),
      backtest_90d_max_s: Number(seconds[seconds.length - 1]!.toFixed(2)),
      backtest_flows: rt.flows.length,
      backtest_flow_days: rt.flows.length * DAYS,
      backtest_findings: findings,
      backtest_incidents: incidents,
      rounds: options.rounds,
    };
  } finally {
    await rt.state.query(`drop schema if exists ${quoteIdent(`${schema}_state`)} cascade`);
    await rt.state.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
    await rt.close();
  }
}
