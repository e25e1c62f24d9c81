/**
 * Rendered charts by content: an incident page draws the same charts on every
 * request until a new judged day changes their series, so each drawing (tens
 * of milliseconds and a Vega view) is made once per day of data, and a page
 * reloaded or scraped in a loop costs a lookup. Least recently used entries
 * go first once `maxEntries` are held, which bounds the memory (an SVG is a
 * few tens of kilobytes).
 */
import { createHash } from 'node:crypto';
import { renderSvg, type Chart } from './index.js';

export class ChartCache {
  private readonly entries = new Map<string, Promise<string>>();
  hits = 0;
  misses = 0;

  constructor(
    private readonly maxEntries = 256,
    private readonly render: (chart: Chart) => Promise<string> = renderSvg,
  ) {}

  get size(): number {
    return this.entries.size;
  }

  /** The chart's SVG, drawn once per distinct spec. */
  async svg(chart: Chart): Promise<string> {
    const key = createHash('sha256').update(JSON.stringify(chart.spec)).digest('hex');
    const cached = this.entries.get(key);
    if (cached !== undefined) {
      this.hits++;
      // Map order is insertion order: moving the entry to the end marks it most recently used.
      this.entries.delete(key);
      this.entries.set(key, cached);
      return await cached;
    }
    this.misses++;
    const drawing = this.render(chart);
    this.entries.set(key, drawing);
    drawing.catch(() => this.entries.delete(key));
    while (this.entries.size > this.maxEntries) this.entries.delete(this.entries.keys().next().value!);
    return await drawing;
  }
}

/** The pages' cache, one per process. */
export const pageCharts = new ChartCache();
