import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** Absolute path of a file under test/fixtures. */
export function fixturePath(...parts: string[]): string {
  return fileURLToPath(new URL(`../fixtures/${parts.join('/')}`, import.meta.url));
}

export function readFixture(...parts: string[]): string {
  return readFileSync(fixturePath(...parts), 'utf8');
}

/** Small deterministic PRNG (mulberry32) for generated series. */
export function prng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal draw (Box-Muller) from a uniform PRNG. */
export function normal(rand: () => number): number {
  return Math.sqrt(-2 * Math.log(1 - rand())) * Math.cos(2 * Math.PI * rand());
}

/** A case of test/fixtures/day-proportion/cases.json, written by its runner.R (R's metafor DerSimonian-Laird fit, qt / qnorm). */
export interface DayProportionCase {
  case: string;
  successes: number[];
  trials: number[];
  day_successes: number;
  day_trials: number;
  tail: number;
  q: number;
  tau2: number;
  center: number;
  center_se: number;
  variance: number;
  score: number;
  critical: number;
}

export function readDayProportionCases(): { r_version: string; metafor_version: string; cases: DayProportionCase[] } {
  return JSON.parse(readFixture('day-proportion', 'cases.json')) as { r_version: string; metafor_version: string; cases: DayProportionCase[] };
}
