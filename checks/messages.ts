/**
 * Message templates: `{name}` placeholders filled from a values object. Output
 * is plain text; every renderer (chat, HTML, e-mail) escapes it for its markup.
 */
export function renderMessage(template: string, values: Record<string, string | number | null | undefined>): string {
  return template.replace(/\{(\w+)\}/g, (whole, name: string) => {
    const value = values[name];
    if (value === undefined) throw new Error(`message template needs {${name}}: ${template}`);
    return value === null ? '-' : String(value);
  });
}

const grouped = new Intl.NumberFormat('en-US', { maximumFractionDigits: 0 });

/** 12,345 */
export function formatCount(value: number): string {
  return grouped.format(value);
}

/** 41.2% from a fraction. */
export function formatPercent(fraction: number, digits = 1): string {
  return `${(100 * fraction).toFixed(digits)}%`;
}

/** A number with sensible precision for messages: counts grouped, small values to 2 decimals. */
export function formatNumber(value: number): string {
  if (!Number.isFinite(value)) return String(value);
  if (Math.abs(value) >= 100) return formatCount(value);
  return Number(value.toFixed(2)).toString();
}
