/**
 * Comparing what the rollup SQL returned with the brute-force references
 * (reference.ts), shared by the property tests: rows are keyed and sorted
 * in byte order, counts compared exactly, times to 1e-6 seconds.
 */
import { expect } from 'vitest';
import { byteOrder, type ReferenceFunnelRow, type ReferenceStepRow } from './reference.js';

type FunnelKey = { platform: string; version: string; dimension: string; value: string };
const funnelKey = (row: FunnelKey) => [row.platform, row.version, row.dimension, row.value].join('|');

function expectSameSeconds(actual: number | null | undefined, expected: number | null | undefined): void {
  if (expected === null || expected === undefined) expect(actual ?? null).toBeNull();
  else expect(actual).toBeCloseTo(expected, 6);
}

/** The funnel statement's rows against the reference's; `timing` also compares median and 90th percentile step times. */
export function expectFunnelRows(sqlRows: Array<Record<string, unknown>>, expected: ReferenceFunnelRow[], options: { timing: boolean }): void {
  const actual = sqlRows.map((row) => ({
    platform: row.platform as string,
    version: row.version as string,
    dimension: row.dimension as string,
    value: row.value as string,
    entered: (row.entered as string[]).map(Number),
    reached: (row.reached as string[]).map(Number),
    secondsMedian: row.seconds_median as Array<number | null>,
    secondsP90: row.seconds_p90 as Array<number | null>,
    timed: (row.timed as string[]).map(Number),
  }));
  const order = (a: FunnelKey, b: FunnelKey) => byteOrder(funnelKey(a), funnelKey(b));
  actual.sort(order);
  const reference = [...expected].sort(order);
  expect(actual.map(funnelKey)).toEqual(reference.map(funnelKey));
  actual.forEach((row, i) => {
    const ref = reference[i]!;
    expect({ entered: row.entered, reached: row.reached, timed: row.timed }).toEqual({ entered: ref.entered, reached: ref.reached, timed: ref.timed });
    if (!options.timing) return;
    row.secondsMedian.forEach((v, k) => expectSameSeconds(v, ref.secondsMedian[k]));
    row.secondsP90.forEach((v, k) => expectSameSeconds(v, ref.secondsP90[k]));
  });
}

/** The step-count statement's rows against the reference's. */
export function expectStepRows(sqlRows: Array<Record<string, unknown>>, expected: ReferenceStepRow[]): void {
  const key = (row: { platform: string; version: string; step: number }) => [row.platform, row.version, row.step].join('|');
  const actual = sqlRows
    .map((row) => ({ platform: row.platform as string, version: row.version as string, step: Number(row.step), events: Number(row.events), people: Number(row.people) }))
    .sort((a, b) => byteOrder(key(a), key(b)));
  expect(actual).toEqual([...expected].sort((a, b) => byteOrder(key(a), key(b))));
}
