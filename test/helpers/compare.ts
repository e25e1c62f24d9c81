/**
 * Comparing what a warehouse engine returned with the brute-force references
 * (reference.ts), shared by the property tests: rows are keyed and sorted
 * in byte order, counts compared exactly, times to 1e-6 seconds.
 */
import { expect } from 'vitest';
import type { EventCountRow, FunnelRow, StepCountRow } from '../../service/warehouse/engine.js';
import { byteOrder, type ReferenceCountRow, type ReferenceFunnelRow, type ReferenceStepRow } from './reference.js';

type FunnelKey = { platform: string; version: string; dimension: string; value: string };
const funnelKey = (row: FunnelKey) => [row.platform, row.version, row.dimension, row.value].join('|');

function expectSameSeconds(actual: number | null | undefined, expected: number | null | undefined): void {
  if (expected === null || expected === undefined) expect(actual ?? null).toBeNull();
  else expect(actual).toBeCloseTo(expected, 6);
}

/** An engine's funnel rows against the reference's; `timing` also compares median and 90th percentile step times. */
export function expectFunnelRows(rows: FunnelRow[], expected: ReferenceFunnelRow[], options: { timing: boolean }): void {
  const order = (a: FunnelKey, b: FunnelKey) => byteOrder(funnelKey(a), funnelKey(b));
  const actual = [...rows].sort(order);
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

/** An engine's step-count rows against the reference's. */
export function expectStepRows(rows: StepCountRow[], expected: ReferenceStepRow[]): void {
  const key = (row: { platform: string; version: string; step: number }) => [row.platform, row.version, row.step].join('|');
  const sorted = <T extends StepCountRow>(list: T[]) => [...list].sort((a, b) => byteOrder(key(a), key(b)));
  expect(sorted(rows)).toEqual(sorted(expected));
}

/** An engine's event-count rows against the reference's. */
export function expectCountRows(rows: EventCountRow[], expected: ReferenceCountRow[]): void {
  const key = (row: EventCountRow) => [row.event, row.platform, row.version, row.dimension, row.value].join('|');
  const sorted = (list: EventCountRow[]) => [...list].sort((a, b) => byteOrder(key(a), key(b)));
  expect(sorted(rows)).toEqual(sorted(expected));
}
