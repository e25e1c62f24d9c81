/**
 * Times the scenario generator against a PostgreSQL server, in a scratch schema
 * that is dropped afterwards:
 *
 *   DATABASE_URL=postgres://... npx tsx service/demo/measure.ts [from] [to] [scale]
 *
 * Defaults: the full demo range at scale 1.
 */
import pg from 'pg';
import { quoteIdent } from '../db/sql.js';
import { DEMO_FROM, DEMO_TO, generateScenario } from './scenario.js';

const url = process.env.DATABASE_URL;
if (!url) throw new Error('set DATABASE_URL to a PostgreSQL server to measure against');
const [from = DEMO_FROM, to = DEMO_TO, scale = '1'] = process.argv.slice(2);
const schema = `demo_measure_${process.pid}`;
const pool = new pg.Pool({ connectionString: url, max: 4 });
try {
  const result = await generateScenario(pool, { schema, table: 'events', from, to, scale: Number(scale) });
  const { rows } = await pool.query<{ size: string }>({
    text: 'select pg_size_pretty(pg_total_relation_size($1::regclass)) as size',
    values: [`${quoteIdent(schema)}.events`],
  });
  console.log(
    `${from}..${to} scale ${scale}: ${result.events} events over ${result.days} days (${Math.round(result.events / result.days)}/day) ` +
      `in ${(result.millis / 1000).toFixed(1)} s, ${rows[0]?.size ?? '?'} on disk`,
  );
} finally {
  await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
  await pool.end();
}
