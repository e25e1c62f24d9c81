import pg from 'pg';
import { generateScenario } from './scenario.js';
const [schema, from, to, scale, incidents] = process.argv.slice(2);
const pool = new pg.Pool({ connectionString: 'postgres://postgres@127.0.0.1:5432/test', max: 4 });
const r = await generateScenario(pool, { schema: schema!, table: 'events', from: from!, to: to!, scale: Number(scale ?? 1), incidents: incidents !== 'clean', replace: true });
console.log(r);
await pool.end();
