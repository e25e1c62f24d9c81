/**
 * plumbline's charts, one module for every surface: the incident pages embed
 * the SVG in HTML, the weekly digest attaches PNG images referenced by content
 * id (many mail clients block SVG).
 *
 * Why Vega plus resvg: a chart is a declarative Vega spec (vega 6, the
 * Vega visualization grammar, Satyanarayan et al., IEEE TVCG 2016) rendered
 * headless to SVG with no browser and no canvas; `@resvg/resvg-js` (a Rust
 * SVG renderer shipped as prebuilt binaries inside npm packages) turns that
 * SVG into PNG with the machine's fonts. Both work offline. A canvas library
 * with a charting library on top would give PNG only, and the pages would
 * need a second way to draw. Text in a chart comes out escaped by Vega's SVG
 * writer, so client strings (event names in titles) cannot inject markup.
 *
 * Fonts: the image needs a sans-serif font installed (Debian `fonts-dejavu-core`).
 */
import { renderAsync } from '@resvg/resvg-js';
import { View, parse, type Spec } from 'vega';
import type { Day, ExcerptPoint } from '../../checks/types.js';
import { cleanText } from '../present/text.js';
import { CHART_BACKGROUND, platformColour } from './colours.js';

const FONT = 'DejaVu Sans, Liberation Sans, Arial, sans-serif';
const TITLE_MAX = 90;

export interface Chart {
  spec: Spec;
  /** Short plain-text description for `alt` attributes (escape it). */
  alt: string;
}

/** Every chart is exactly its width by its height, axes and legend included, so images line up. */
export const CHART_WIDTH = 560;

const baseConfig = {
  background: CHART_BACKGROUND,
  padding: 6,
  autosize: { type: 'fit', contains: 'padding' },
  config: {
    text: { font: FONT },
    title: { font: FONT, fontSize: 13, fontWeight: 'bold', anchor: 'start', color: '#1f2933' },
    axis: { labelFont: FONT, titleFont: FONT, labelFontSize: 11, labelColor: '#52606d', domainColor: '#9aa5b1', tickColor: '#9aa5b1', gridColor: '#e4e7eb' },
    legend: { labelFont: FONT, titleFont: FONT, labelFontSize: 11 },
  },
} as const;

/**
 * A daily series with its expected band and the flagged days marked: the
 * shape of every finding's excerpt.
 */
export function dailySeriesChart(points: readonly ExcerptPoint[], options: { title: string; percent: boolean; width?: number; height?: number }): Chart {
  const title = cleanText(options.title, TITLE_MAX);
  const values = points.map((p) => ({ day: p.day, value: p.value, low: p.expectedLow ?? null, high: p.expectedHigh ?? null, flagged: p.flagged === true }));
  const flagged = values.filter((v) => v.flagged).length;
  return {
    alt: `${title}: daily values with the expected range, ${flagged} flagged day${flagged === 1 ? '' : 's'}`,
    spec: {
      ...baseConfig,
      width: options.width ?? CHART_WIDTH,
      height: options.height ?? 170,
      title: { text: title, limit: options.width ?? CHART_WIDTH },
      data: [
        { name: 'points', values, format: { parse: { day: 'date' } } },
        { name: 'band', source: 'points', transform: [{ type: 'filter', expr: 'isValid(datum.low) && isValid(datum.high)' }] },
        { name: 'flagged', source: 'points', transform: [{ type: 'filter', expr: 'datum.flagged && isValid(datum.value)' }] },
      ],
      scales: [
        { name: 'x', type: 'utc', domain: { data: 'points', field: 'day' }, range: 'width' },
        { name: 'y', type: 'linear', domain: { fields: [{ data: 'points', field: 'value' }, { data: 'points', field: 'low' }, { data: 'points', field: 'high' }] }, range: 'height', nice: true, zero: true },
      ],
      axes: [
        { orient: 'bottom', scale: 'x', format: '%b %d', formatType: 'utc', tickCount: 7, labelOverlap: true },
        { orient: 'left', scale: 'y', format: options.percent ? '.0%' : ',~f', grid: true, tickCount: 5 },
      ],
      marks: [
        {
          type: 'area',
          from: { data: 'band' },
          encode: { enter: { x: { scale: 'x', field: 'day' }, y: { scale: 'y', field: 'low' }, y2: { scale: 'y', field: 'high' }, fill: { value: '#cbd2d9' }, fillOpacity: { value: 0.6 } } },
        },
        {
          type: 'line',
          from: { data: 'points' },
          encode: {
            enter: {
              x: { scale: 'x', field: 'day' },
              y: { scale: 'y', field: 'value' },
              defined: { signal: 'isValid(datum.value)' },
              stroke: { value: '#243b53' },
              strokeWidth: { value: 2 },
            },
          },
        },
        {
          type: 'symbol',
          from: { data: 'flagged' },
          encode: { enter: { x: { scale: 'x', field: 'day' }, y: { scale: 'y', field: 'value' }, size: { value: 60 }, fill: { value: '#d64545' }, stroke: { value: CHART_BACKGROUND } } },
        },
      ],
    },
  };
}

export interface WeeklyPoint {
  /** First day of the week. */
  week: Day;
  platform: string;
  /** Completed / entered, 0 to 1; null without entrants. */
  conversion: number | null;
}

/** End-to-end conversion per week, one line per platform. */
export function weeklyConversionChart(points: readonly WeeklyPoint[], options: { title: string; width?: number; height?: number }): Chart {
  const title = cleanText(options.title, TITLE_MAX);
  const platforms = [...new Set(points.map((p) => p.platform))].sort();
  const weeks = [...new Set(points.map((p) => p.week))].sort();
  return {
    alt: `${title}: weekly end-to-end conversion for ${platforms.join(', ') || 'no platform'}`,
    spec: {
      ...baseConfig,
      width: options.width ?? CHART_WIDTH,
      height: options.height ?? 170,
      title: { text: title, limit: options.width ?? CHART_WIDTH },
      data: [{ name: 'points', values: points.map((p) => ({ ...p })), format: { parse: { week: 'date' } }, transform: [{ type: 'filter', expr: 'isValid(datum.conversion)' }] }],
      scales: [
        { name: 'x', type: 'utc', domain: { data: 'points', field: 'week' }, range: 'width', padding: 12 },
        { name: 'y', type: 'linear', domain: { data: 'points', field: 'conversion' }, range: 'height', nice: true, zero: false },
        { name: 'color', type: 'ordinal', domain: platforms, range: platforms.map(platformColour) },
      ],
      axes: [
        { orient: 'bottom', scale: 'x', format: '%b %d', formatType: 'utc', values: weeks.map((week) => Date.parse(`${week}T00:00:00Z`)), labelOverlap: true },
        { orient: 'left', scale: 'y', format: '.0%', grid: true, tickCount: 4 },
      ],
      legends: [{ stroke: 'color', orient: 'right', symbolType: 'stroke' }],
      marks: [
        {
          type: 'group',
          from: { facet: { name: 'series', data: 'points', groupby: 'platform' } },
          marks: [
            {
              type: 'line',
              from: { data: 'series' },
              sort: { field: 'datum.week' },
              encode: { enter: { x: { scale: 'x', field: 'week' }, y: { scale: 'y', field: 'conversion' }, stroke: { scale: 'color', field: 'platform' }, strokeWidth: { value: 2 } } },
            },
            {
              type: 'symbol',
              from: { data: 'series' },
              encode: { enter: { x: { scale: 'x', field: 'week' }, y: { scale: 'y', field: 'conversion' }, fill: { scale: 'color', field: 'platform' }, size: { value: 30 } } },
            },
          ],
        },
      ],
    },
  };
}

/** The chart as a standalone SVG document (inline it in HTML as is). */
export async function renderSvg(chart: Chart): Promise<string> {
  const view = new View(parse(chart.spec), { renderer: 'none' });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

/** The chart as a PNG image, at `scale` times its CSS size for sharp text on high-density screens. */
export async function renderPng(chart: Chart, scale = 2): Promise<Buffer> {
  const svg = await renderSvg(chart);
  const image = await renderAsync(svg, { fitTo: { mode: 'zoom', value: scale }, background: CHART_BACKGROUND, font: { loadSystemFonts: true, defaultFontFamily: 'DejaVu Sans' } });
  return image.asPng();
}
