/**
 * The frame and building blocks of the human pages: plain semantic HTML that
 * reads without its stylesheet, no scripts and nothing loaded from elsewhere
 * (the server's content security policy allows inline styles only).
 *
 * Markup rule: every argument called `html` or `cells` is already markup; all
 * other strings are text and are escaped here. Client data (event names,
 * versions, titles, sentences, errors) goes through `htmlText`, which also
 * strips control and direction characters and clips its length.
 */
import type { Severity } from '../../../checks/types.js';
import { severityLabel } from '../../present/marks.js';
import { cleanText, escapeHtml, htmlText } from '../../present/text.js';

/** Longest client string shown in a table cell or a heading. */
export const NAME_MAX = 120;
/** Longest sentence (finding messages, cause sentences, errors). */
export const SENTENCE_MAX = 400;

const STYLE = `
:root { color-scheme: light; }
body { margin: 0; font: 15px/1.45 system-ui, "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1f2933; background: #f5f7fa; }
header, main, footer { max-width: 1040px; margin: 0 auto; padding: 0 20px; }
header { padding-top: 14px; }
header nav a { font-weight: 600; text-decoration: none; color: #243b53; }
main { background: #fff; padding: 8px 24px 24px; border-radius: 6px; }
footer { color: #52606d; font-size: 13px; padding-top: 10px; padding-bottom: 20px; }
h1 { font-size: 22px; margin: 14px 0 6px; }
h2 { font-size: 18px; margin: 26px 0 8px; padding-top: 12px; border-top: 1px solid #e4e7eb; }
h3 { font-size: 15px; margin: 18px 0 6px; }
table { border-collapse: collapse; width: 100%; font-size: 14px; margin: 6px 0 10px; }
caption { text-align: left; color: #52606d; padding: 2px 0 6px; }
th, td { text-align: left; padding: 4px 8px; border-bottom: 1px solid #e4e7eb; vertical-align: top; }
thead th { color: #52606d; font-weight: 600; border-bottom-color: #cbd2d9; }
td.num, th.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
tr.blamed { background: #fff3c4; }
tr.flagged td { color: #ba2525; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 8px 0; }
dl.facts dt { color: #52606d; }
dl.facts dd { margin: 0; }
.note { background: #e6f6ff; border-left: 4px solid #2680c2; padding: 8px 12px; margin: 12px 0; }
.muted { color: #52606d; }
.sev { font-weight: 700; text-transform: uppercase; font-size: 12px; letter-spacing: .04em; white-space: nowrap; }
.sev-page { color: #ba2525; }
.sev-warn { color: #b44d12; }
.sev-note { color: #52606d; }
figure.chart { margin: 10px 0; }
figure.chart svg { width: 100%; max-width: 700px; height: auto; display: block; }
figure.chart figcaption { color: #52606d; font-size: 13px; }
section.symptom { margin-bottom: 18px; }
bdi { unicode-bidi: isolate; }
time { white-space: nowrap; }
`;

export interface PageOptions {
  /** Plain text. */
  title: string;
  /** The page's content, markup. */
  html: string;
  /** Relative path from this page to the overview (`./` on `/`, `../` one level down): pages work behind a path prefix. */
  root: string;
  demo: boolean;
}

export function pageDocument(options: PageOptions): string {
  const demo = options.demo
    ? `<p class="note" role="note">Demo: these pages show the invented Metro Pass scenario from the embedded database. No schedule runs and no message is sent.</p>`
    : '';
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<link rel="icon" href="data:,">
<title>${escapeHtml(cleanText(options.title, NAME_MAX))} · plumbline</title>
<style>${STYLE}</style>
</head>
<body>
<header><nav aria-label="plumbline"><a href="${escapeHtml(options.root)}">plumbline</a></nav></header>
<main>
${demo}
${options.html}
</main>
<footer>plumbline · pages are read-only; event names and values come from apps and websites and are shown as text.</footer>
</body>
</html>
`;
}

export interface Column {
  /** Plain text. */
  label: string;
  numeric?: boolean;
}

/**
 * A data table with a caption and column headers; `cells` are markup. The
 * first cell of each row heads the row (`th scope="row"`).
 */
export function dataTable(options: { caption: string; columns: Column[]; rows: Array<{ cells: string[]; className?: string }>; foot?: string[] }): string {
  const cell = (tag: 'th' | 'td', html: string, i: number, scope?: string) =>
    `<${tag}${scope ? ` scope="${scope}"` : ''}${options.columns[i]?.numeric ? ' class="num"' : ''}>${html}</${tag}>`;
  const head = options.columns.map((column, i) => cell('th', escapeHtml(column.label), i, 'col')).join('');
  const row = (cells: string[], className?: string) =>
    `<tr${className ? ` class="${escapeHtml(className)}"` : ''}>${cells.map((html, i) => (i === 0 ? cell('th', html, i, 'row') : cell('td', html, i))).join('')}</tr>`;
  const body = options.rows.map((r) => row(r.cells, r.className)).join('\n');
  const foot = options.foot ? `<tfoot>${row(options.foot)}</tfoot>` : '';
  return `<table><caption>${escapeHtml(options.caption)}</caption><thead><tr>${head}</tr></thead><tbody>
${body}
</tbody>${foot}</table>`;
}

/** A definition list of facts; values are markup. */
export function facts(entries: Array<[string, string]>): string {
  return `<dl class="facts">${entries.map(([term, html]) => `<dt>${escapeHtml(term)}</dt><dd>${html}</dd>`).join('')}</dl>`;
}

export function severityText(severity: Severity): string {
  return `<span class="sev sev-${escapeHtml(severity)}">${escapeHtml(severityLabel(severity))}</span>`;
}

/** Client text in a table cell or sentence. */
export function clientText(text: string | null | undefined, max = NAME_MAX): string {
  return text === null || text === undefined || text === '' ? '<span class="muted">-</span>' : htmlText(text, max);
}

/** An app version as shown: empty means events sent without one. */
export function versionText(version: string | null): string {
  if (version === null) return '<span class="muted">-</span>';
  if (version === '') return '<span class="muted">(no version)</span>';
  return htmlText(version, 40);
}

/** A business day, kept on one line. */
export function dayText(day: string | null): string {
  return day === null ? '<span class="muted">-</span>' : `<time datetime="${escapeHtml(day)}">${escapeHtml(day)}</time>`;
}

/** A paragraph for an empty list. */
export function none(text: string): string {
  return `<p class="muted">${escapeHtml(text)}</p>`;
}

/** A relative link to an incident page from a page whose way to the overview is `root`; the label is client text. */
export function incidentLink(root: string, id: string, label: string): string {
  return `<a href="${escapeHtml(`${root}incidents/${encodeURIComponent(id)}`)}">${htmlText(label, NAME_MAX)}</a>`;
}

/** "2026-03-12 09:30 CET": an instant in the business timezone. */
export function formatInstant(instant: Date | string, timezone: string): string {
  const parts = new Intl.DateTimeFormat('en-US', {
    timeZone: timezone,
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    timeZoneName: 'short',
  }).formatToParts(new Date(instant));
  const get = (type: Intl.DateTimeFormatPartTypes) => parts.find((part) => part.type === type)?.value ?? '';
  return `${get('year')}-${get('month')}-${get('day')} ${get('hour')}:${get('minute')} ${get('timeZoneName')}`;
}

/** "35 ms", "4.2 s", "2 min 05 s". */
export function formatSeconds(seconds: number): string {
  if (seconds < 1) return `${Math.round(seconds * 1000)} ms`;
  if (seconds < 60) return `${seconds.toFixed(seconds < 10 ? 1 : 0)} s`;
  const whole = Math.round(seconds);
  return `${Math.floor(whole / 60)} min ${String(whole % 60).padStart(2, '0')} s`;
}

/** "version_rate" or "versionRate" -> "version rate": evidence keys as words. */
export function keyWords(key: string): string {
  return key
    .replace(/([a-z0-9])([A-Z])/g, '$1 $2')
    .replace(/[_.]+/g, ' ')
    .toLowerCase();
}
