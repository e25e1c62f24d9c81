/**
 * Generates the "Metro Pass" demo scenario into a PostgreSQL events table:
 * a city transit app selling monthly passes on web, Android and iOS, with the
 * incidents listed in ground-truth.ts. See service/demo/README.md.
 */
import type pg from 'pg';
import { daysBetween } from '../config/definitions.js';
import { quoteIdent, quoteQualified } from '../db/sql.js';
import { createIndexQuery, createTableQueries, unitInsertQuery, type UnitSpec } from './generate-sql.js';
import { DEFAULT_SEED, DEMO_TIMEZONE, JOURNEY_KINDS, MAX_SCALE, planDay } from './model.js';

export { DEMO_FROM, DEMO_TIMEZONE, DEMO_TO, DEFAULT_SEED } from './model.js';
export { GROUND_TRUTH_FILE, groundTruth, groundTruthFor, writeGroundTruth } from './ground-truth.js';
export type { BenignChange, CauseLabel, CheckId, GroundTruthRange, Incident } from './ground-truth.js';

export interface ScenarioOptions {
  schema: string;
  /** Table name inside `schema`. */
  table: string;
  /** First and last day generated (inclusive, ISO dates in the scenario's timezone). */
  from: string;
  to: string;
  /** Multiplies the number of people (1: about 10k-25k events a day). */
  scale?: number;
  seed?: number;
  /** Inject the incidents (default true); the declared holidays stay either way. */
  incidents?: boolean;
  /** Drop and recreate the table when it exists; otherwise an existing table is an error. */
  replace?: boolean;
  /** Insert statements run side by side (default 2: one per core of the target machine). */
  concurrency?: number;
}

export interface ScenarioResult {
  events: number;
  days: number;
  millis: number;
}

/** Called after each generated day (label: the day) and once more after indexing (label: 'index'). */
export type ScenarioProgress = (done: number, total: number, label: string) => void;

/** Journeys per insert statement: big days split into several so both cores work on them. */
const JOURNEYS_PER_UNIT = 20_000;

export async function generateScenario(pool: pg.Pool, options: ScenarioOptions, onProgress?: ScenarioProgress): Promise<ScenarioResult> {
  const started = performance.now();
  const scale = options.scale ?? 1;
  const seed = options.seed ?? DEFAULT_SEED;
  if (!(scale > 0 && scale <= MAX_SCALE)) throw new Error(`scenario scale must be in (0, ${MAX_SCALE}], got ${scale}`);
  if (!Number.isSafeInteger(seed) || seed < 0 || seed > 2 ** 40) throw new Error(`scenario seed must be an integer in [0, 2^40], got ${seed}`);
  const days = daysBetween(options.from, options.to);
  if (days.length === 0) throw new Error(`scenario range is empty: ${options.from} .. ${options.to}`);
  const table = `${options.schema}.${options.table}`;

  await pool.query(`create schema if not exists ${quoteIdent(options.schema)}`);
  const { rows } = await pool.query<{ found: string | null }>({ text: 'select to_regclass($1)::text as found', values: [quoteQualified(table)] });
  if (rows[0]?.found) {
    if (!options.replace) throw new Error(`table ${table} already exists; pass replace: true to regenerate it`);
    await pool.query(`drop table ${quoteQualified(table)}`);
  }
  for (const query of createTableQueries(table)) await pool.query(query);

  const switches = { scale, seed, incidents: options.incidents ?? true, to: options.to };
  const units: Array<UnitSpec & { dayIndex: number }> = [];
  days.forEach((day, dayIndex) => {
    const plan = planDay(day, switches);
    for (const platform of plan.platforms) {
      const journeys = JOURNEY_KINDS.reduce((sum, kind) => sum + platform.journeys[kind], 0);
      const parts = Math.max(1, Math.ceil(journeys / JOURNEYS_PER_UNIT));
      for (let part = 0; part < parts; part++) {
        units.push({ plan, platform, part, parts, table, timezone: DEMO_TIMEZONE, seed, scale, dayIndex });
      }
    }
  });

  // Days report done when their last unit finishes; units run in day order, a few at a time.
  const remaining = days.map((_, i) => units.filter((unit) => unit.dayIndex === i).length);
  let events = 0;
  let daysDone = 0;
  let next = 0;
  const worker = async () => {
    while (next < units.length) {
      const unit = units[next++]!;
      const result = await pool.query(unitInsertQuery(unit));
      events += result.rowCount ?? 0;
      if (--remaining[unit.dayIndex]! === 0) onProgress?.(++daysDone, days.length, unit.plan.day);
    }
  };
  const concurrency = Math.max(1, Math.min(options.concurrency ?? 2, units.length));
  await Promise.all(Array.from({ length: concurrency }, worker));

  // Indexing once at the end is several times cheaper than maintaining the index row by row.
  await pool.query(createIndexQuery(table));
  await pool.query(`analyze ${quoteQualified(table)}`);
  onProgress?.(days.length, days.length, 'index');
  return { events, days: days.length, millis: Math.round(performance.now() - started) };
}
