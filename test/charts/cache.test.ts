/** The chart cache draws each distinct chart once, forgets the least recently used first, and never keeps a failed drawing. */
import { describe, expect, it } from 'vitest';
import { ChartCache } from '../../service/charts/cache.js';
import { dailySeriesChart, type Chart } from '../../service/charts/index.js';

const series = (value: number) =>
  Array.from({ length: 14 }, (_, i) => ({ day: `2026-11-${String(i + 1).padStart(2, '0')}`, value: value + i, expectedLow: value - 5, expectedHigh: value + 20 }));

describe('ChartCache', () => {
  it('draws a chart once per distinct series, and again once its data changes', async () => {
    let drawn = 0;
    const cache = new ChartCache(8, async (chart: Chart) => `<svg>${++drawn} ${chart.alt}</svg>`);
    const today = dailySeriesChart(series(100), { title: 'people of rider on android', percent: false });
    const first = await cache.svg(today);
    expect(await cache.svg(dailySeriesChart(series(100), { title: 'people of rider on android', percent: false }))).toBe(first);
    expect(drawn).toBe(1);
    // The next judged day adds a point: a new drawing.
    await cache.svg(dailySeriesChart([...series(100), { day: '2026-11-15', value: 3, expectedLow: 95, expectedHigh: 120, flagged: true }], { title: 'people of rider on android', percent: false }));
    expect(drawn).toBe(2);
    expect({ hits: cache.hits, misses: cache.misses }).toEqual({ hits: 1, misses: 2 });
  });

  it('holds at most maxEntries, dropping the least recently used', async () => {
    let drawn = 0;
    const cache = new ChartCache(2, async () => `<svg>${++drawn}</svg>`);
    const [a, b, c] = [1, 2, 3].map((n) => dailySeriesChart(series(n * 100), { title: `chart ${n}`, percent: false }));
    await cache.svg(a!);
    await cache.svg(b!);
    await cache.svg(a!);
    await cache.svg(c!);
    expect(cache.size).toBe(2);
    await cache.svg(a!);
    expect(drawn).toBe(3);
    await cache.svg(b!);
    expect(drawn).toBe(4);
  });

  it('forgets a drawing that failed', async () => {
    let calls = 0;
    const cache = new ChartCache(4, async () => {
      calls++;
      if (calls === 1) throw new Error('renderer failed');
      return '<svg/>';
    });
    const chart = dailySeriesChart(series(1), { title: 'x', percent: false });
    await expect(cache.svg(chart)).rejects.toThrow('renderer failed');
    expect(await cache.svg(chart)).toBe('<svg/>');
  });
});
