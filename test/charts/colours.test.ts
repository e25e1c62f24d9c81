/**
 * The platform colours against the chart background, by the contrast ratio of
 * WCAG 2.1 (W3C Recommendation, 2018): relative luminance
 * L = 0.2126 R + 0.7152 G + 0.0722 B of the linearised sRGB channels
 * (c / 12.92 up to 0.03928, else ((c + 0.055) / 1.055) ^ 2.4), and ratio
 * (L1 + 0.05) / (L2 + 0.05), lighter over darker. Success criterion 1.4.11
 * (Non-text Contrast) asks 3:1 of graphical objects such as chart lines.
 * The formula is first checked against R's colorspace package
 * (`contrast_ratio(col, "#FFFFFF")`, colorspace 2.1-0 from Debian's
 * r-cran-colorspace), then applied to the colours the charts draw with.
 */
import { describe, expect, it } from 'vitest';
import { CHART_BACKGROUND, PLATFORM_COLOURS, platformColour } from '../../service/charts/colours.js';
import { renderSvg, weeklyConversionChart } from '../../service/charts/index.js';

/** WCAG 2.1 "relative luminance" of a `#rrggbb` colour. */
function relativeLuminance(hex: string): number {
  const [r, g, b] = [1, 3, 5].map((i) => {
    const c = parseInt(hex.slice(i, i + 2), 16) / 255;
    return c <= 0.03928 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  }) as [number, number, number];
  return 0.2126 * r + 0.7152 * g + 0.0722 * b;
}

/** WCAG 2.1 "contrast ratio", from 1 to 21. */
function contrastRatio(a: string, b: string): number {
  const [dark, light] = [relativeLuminance(a), relativeLuminance(b)].sort((x, y) => x - y) as [number, number];
  return (light + 0.05) / (dark + 0.05);
}

describe('WCAG 2.1 contrast ratio', () => {
  // Reference values: R colorspace 2.1-0, contrast_ratio(c("#000000", ...), "#FFFFFF"), rounded to 4 places.
  it.each([
    ['#000000', 21],
    ['#767676', 4.5422],
    ['#777777', 4.4781],
    ['#ff0000', 3.9985],
    ['#0000ff', 8.5925],
    ['#008000', 5.1374],
  ])('%s on white: %f, as R colorspace computes it', (colour, expected) => {
    expect(contrastRatio(colour, '#ffffff')).toBeCloseTo(expected, 3);
    expect(contrastRatio('#ffffff', colour)).toBeCloseTo(expected, 3);
  });
});

describe('platform colours', () => {
  it.each(Object.entries(PLATFORM_COLOURS))('%s (%s) has at least 3:1 against the chart background (WCAG 2.1 SC 1.4.11)', (_platform, colour) => {
    expect(contrastRatio(colour, CHART_BACKGROUND)).toBeGreaterThanOrEqual(3);
  });

  it('gives each of web, android, ios and other its own colour', () => {
    expect(new Set(Object.values(PLATFORM_COLOURS)).size).toBe(4);
    expect(['web', 'android', 'ios', 'desktop', 'kiosk'].map(platformColour)).toEqual([
      PLATFORM_COLOURS.web,
      PLATFORM_COLOURS.android,
      PLATFORM_COLOURS.ios,
      PLATFORM_COLOURS.other,
      PLATFORM_COLOURS.other,
    ]);
  });

  it('are the colours the weekly chart draws each platform with', async () => {
    const platforms = ['android', 'desktop', 'ios', 'web'];
    const points = ['2026-11-02', '2026-11-09'].flatMap((week) => platforms.map((platform, i) => ({ week, platform, conversion: 0.1 + i / 10 })));
    const svg = await renderSvg(weeklyConversionChart(points, { title: 'monthly_pass: end-to-end conversion by week' }));
    const strokes = new Set([...svg.matchAll(/stroke="(#[0-9a-f]{6})"/gi)].map((m) => m[1]!.toLowerCase()));
    for (const platform of platforms) expect(strokes, platform).toContain(platformColour(platform));
    expect(svg).toContain(`fill="${CHART_BACKGROUND}"`);
  });
});
