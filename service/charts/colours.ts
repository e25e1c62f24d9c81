/**
 * The platform colours of every chart, defined once: the pages embed the
 * charts as SVG and the weekly digest attaches them as PNG, both drawn from
 * the specs in `index.ts`, which take their colours from here.
 *
 * Picked for plumbline: a dark blue (web), an olive (Android), a plum (iOS)
 * and a warm grey (any other platform). They differ in lightness as well as
 * hue, so lines stay apart for readers who confuse red and green, and each
 * has a contrast ratio of at least 3:1 against the chart background, the
 * floor for graphical objects in WCAG 2.1 success criterion 1.4.11 (Non-text
 * Contrast); `test/charts/colours.test.ts` computes the ratios.
 */

/** Behind every chart, in the SVG and in the PNG. */
export const CHART_BACKGROUND = '#ffffff';

export const PLATFORM_COLOURS = {
  web: '#1b4f8f',
  android: '#5f7f12',
  ios: '#b03d7e',
  other: '#7a7268',
} as const;

/** The colour of a configured platform id; ids other than web, android and ios share the "other" colour. */
export function platformColour(platform: string): string {
  switch (platform) {
    case 'web':
    case 'android':
    case 'ios':
      return PLATFORM_COLOURS[platform];
    default:
      return PLATFORM_COLOURS.other;
  }
}
