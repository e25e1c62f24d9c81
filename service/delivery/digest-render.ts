/**
 * The weekly digest as HTML and plain text. Every string from data goes
 * through `htmlText` (cleaned, clipped, escaped, direction-isolated) or
 * `cleanText` for the plain part; numbers and our own words through
 * `escapeHtml`. Charts are images whose source the caller decides: `cid:`
 * references in the e-mail, data URIs in the browser preview.
 */
import { formatCount, formatPercent } from '../../checks/messages.js';
import { CHART_WIDTH, dailySeriesChart, weeklyConversionChart, type Chart } from '../charts/index.js';
import type { Digest, DigestFlow, DigestIncident, Rate } from './digest-data.js';
import { BASELINE_WEEKS } from './digest-data.js';
import { RESOLVED_MARK, severityLabel } from '../present/marks.js';
import { cleanText, escapeHtml, htmlText } from '../present/text.js';

/** Incident charts per digest, so a bad week does not make a huge message. */
const MAX_INCIDENT_CHARTS = 6;
const NAME_MAX = 120;
const MESSAGE_MAX = 300;

export interface DigestChart {
  /** Content id: the e-mail references the image as `cid:<cid>`. */
  cid: string;
  filename: string;
  chart: Chart;
}

export interface RenderedDigest {
  subject: string;
  html: string;
  /** The HTML body alone, for a preview that shows several digests. */
  body: string;
  text: string;
}

export function digestSubject(digest: Digest): string {
  return `plumbline weekly digest: ${digest.owner}, ${digest.week} to ${digest.weekEnd}`;
}

const conversionCid = (digest: Digest, flow: DigestFlow) => `conversion.${flow.id}.${digest.week}@plumbline`;
const incidentCid = (incident: DigestIncident) => `incident.${incident.incident.id}@plumbline`;

/** The charts a digest shows: one conversion chart per flow, then one per opened incident (at most MAX_INCIDENT_CHARTS). */
export function digestCharts(digest: Digest): DigestChart[] {
  const charts: DigestChart[] = digest.flows.map((flow) => ({
    cid: conversionCid(digest, flow),
    filename: `${flow.id}-conversion.png`,
    chart: weeklyConversionChart(flow.weekly, { title: `${flow.title}: end-to-end conversion by week` }),
  }));
  const incidents = digest.flows.flatMap((flow) => flow.opened).filter((i) => i.excerpt.length > 0);
  for (const item of incidents.slice(0, MAX_INCIDENT_CHARTS)) {
    charts.push({
      cid: incidentCid(item),
      filename: `${item.incident.id}.png`,
      chart: dailySeriesChart(item.excerpt, { title: `${item.presentation.metric ?? 'value'} by day, ${item.presentation.where}`, percent: item.percent, height: 140 }),
    });
  }
  return charts;
}

const pct = (value: number | null) => (value === null ? '-' : formatPercent(value));

function change(rate: Rate, baseline: Rate): string {
  if (rate.rate === null || baseline.rate === null) return '-';
  const pp = 100 * (rate.rate - baseline.rate);
  return `${pp >= 0 ? '+' : '−'}${Math.abs(pp).toFixed(1)} pp`;
}

const css = {
  body: 'margin:0;padding:16px;background:#f5f7fa;font-family:Helvetica,Arial,sans-serif;color:#1f2933;font-size:14px;line-height:1.45',
  card: 'max-width:680px;margin:0 auto;background:#ffffff;padding:20px 24px;border-radius:6px',
  h1: 'font-size:20px;margin:0 0 4px',
  h2: 'font-size:17px;margin:28px 0 8px;padding-top:12px;border-top:1px solid #e4e7eb',
  h3: 'font-size:14px;margin:18px 0 6px',
  muted: 'color:#52606d',
  table: 'border-collapse:collapse;width:100%;font-size:13px',
  th: 'text-align:left;padding:4px 8px;border-bottom:1px solid #cbd2d9;color:#52606d;font-weight:600',
  td: 'padding:4px 8px;border-bottom:1px solid #f0f2f5;vertical-align:top',
  num: 'padding:4px 8px;border-bottom:1px solid #f0f2f5;text-align:right;white-space:nowrap',
  img: 'display:block;max-width:100%;height:auto;margin:8px 0',
  severity: { page: '#d64545', warn: '#cb6e17', note: '#52606d' } as Record<string, string>,
};

function table(headers: string[], rows: string[][], numeric: boolean[]): string {
  const head = headers.map((h) => `<th style="${css.th}">${escapeHtml(h)}</th>`).join('');
  const body = rows.map((cells) => `<tr>${cells.map((cell, i) => `<td style="${numeric[i] ? css.num : css.td}">${cell}</td>`).join('')}</tr>`).join('');
  return `<table role="presentation" style="${css.table}"><thead><tr>${head}</tr></thead><tbody>${body}</tbody></table>`;
}

function incidentHtml(item: DigestIncident, images: ReadonlyMap<string, string>): string {
  const { incident, presentation: p } = item;
  const color = css.severity[incident.severity] ?? '#52606d';
  const status = incident.status === 'resolved' ? `resolved ${RESOLVED_MARK} ${escapeHtml(incident.resolvedDay ?? '')}` : escapeHtml(incident.status);
  const lines = [
    `<p style="margin:10px 0 2px"><strong style="color:${color}">${escapeHtml(severityLabel(incident.severity))}</strong> · <a href="${escapeHtml(item.url)}">${htmlText(p.headline, NAME_MAX)}</a></p>`,
    `<p style="margin:0;${css.muted}">${htmlText(p.where, 60)} · since ${escapeHtml(incident.since)} · seen on ${incident.daysSeen} judged day${incident.daysSeen === 1 ? '' : 's'} · ${status}</p>`,
  ];
  if (p.observed !== null && p.expected !== null) {
    lines.push(`<p style="margin:0">Observed ${htmlText(p.observed, 40)} (${htmlText(p.metric ?? '', 40)}), expected ${htmlText(p.expected, 60)}</p>`);
  }
  lines.push(`<p style="margin:0">Likely cause: ${htmlText(p.cause.label, 40)} (confidence ${escapeHtml(p.cause.confidence)}). ${htmlText(p.cause.sentence, MESSAGE_MAX)}</p>`);
  const image = images.get(incidentCid(item));
  if (image !== undefined) lines.push(`<img src="${escapeHtml(image)}" alt="${escapeHtml(cleanText(p.headline, NAME_MAX))}" width="${CHART_WIDTH}" style="${css.img}">`);
  return lines.join('\n');
}

function flowHtml(digest: Digest, flow: DigestFlow, images: ReadonlyMap<string, string>): string {
  const parts = [`<h2 style="${css.h2}">${htmlText(flow.title, NAME_MAX)} <span style="${css.muted};font-weight:normal">(${htmlText(flow.id, 60)})</span></h2>`];
  const chart = images.get(conversionCid(digest, flow));
  if (chart !== undefined) parts.push(`<img src="${escapeHtml(chart)}" alt="${escapeHtml(`${cleanText(flow.title, NAME_MAX)}: end-to-end conversion by week and platform`)}" width="${CHART_WIDTH}" style="${css.img}">`);
  parts.push(`<h3 style="${css.h3}">End-to-end conversion</h3>`);
  parts.push(
    table(
      ['platform', 'this week', `previous ${BASELINE_WEEKS} weeks`, 'change', 'entrants'],
      flow.conversion.map((c) => [htmlText(c.platform, 40), escapeHtml(pct(c.week.rate)), escapeHtml(pct(c.baseline.rate)), escapeHtml(change(c.week, c.baseline)), escapeHtml(formatCount(c.week.entered))]),
      [false, true, true, true, true],
    ),
  );
  parts.push(`<h3 style="${css.h3}">Step drop-off</h3><p style="margin:0 0 4px;${css.muted}">Share of entrants reaching each step: this week (previous ${BASELINE_WEEKS} weeks).</p>`);
  parts.push(
    table(
      ['step', ...flow.platforms],
      flow.dropOff.map((step) => [htmlText(step.step, 60), ...step.platforms.map((p) => `${escapeHtml(pct(p.week))} <span style="${css.muted}">(${escapeHtml(pct(p.baseline))})</span>`)]),
      [false, ...flow.platforms.map(() => true)],
    ),
  );
  parts.push(`<h3 style="${css.h3}">Incidents opened (${flow.opened.length})</h3>`);
  parts.push(flow.opened.length === 0 ? `<p style="margin:0;${css.muted}">None.</p>` : flow.opened.map((i) => incidentHtml(i, images)).join('\n'));
  parts.push(`<h3 style="${css.h3}">Incidents resolved (${flow.resolved.length})</h3>`);
  parts.push(flow.resolved.length === 0 ? `<p style="margin:0;${css.muted}">None.</p>` : flow.resolved.map((i) => incidentHtml(i, new Map())).join('\n'));
  parts.push(`<h3 style="${css.h3}">Schema changes (${flow.schemaChanges.length})</h3>`);
  parts.push(
    flow.schemaChanges.length === 0
      ? `<p style="margin:0;${css.muted}">None.</p>`
      : table(
          ['first seen', 'where', 'key', 'change'],
          flow.schemaChanges.map((c) => [
            escapeHtml(c.firstDay),
            htmlText([c.platform, c.version].filter(Boolean).join(' ') || 'all', 60),
            htmlText(c.subject, NAME_MAX),
            c.message === null ? `${htmlText(c.kind, 40)} <span style="${css.muted}">(values hidden)</span>` : htmlText(c.message, MESSAGE_MAX),
          ]),
          [false, false, false, false],
        ),
  );
  parts.push(`<h3 style="${css.h3}">Noise per check</h3><p style="margin:0 0 4px;${css.muted}">Findings raised and muted this week, incidents opened, and how many of those were seen on one day only: a check with many one-day incidents may need a higher threshold.</p>`);
  parts.push(
    flow.noise.length === 0
      ? `<p style="margin:0;${css.muted}">No findings this week.</p>`
      : table(
          ['check', 'raised', 'muted', 'incidents', 'one-day incidents'],
          flow.noise.map((n) => [htmlText(n.check, 40), String(n.raised), String(n.muted), String(n.incidents), String(n.oneDay)]),
          [false, true, true, true, true],
        ),
  );
  return parts.join('\n');
}

/** The HTML document of a body. */
export function htmlDocument(title: string, body: string): string {
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>${escapeHtml(title)}</title></head>
<body style="${css.body}">
${body}
</body></html>
`;
}

/** `images` maps a chart's content id to the image source to use (`cid:...` or a data URI); charts without one are left out. */
export function renderDigest(digest: Digest, images: ReadonlyMap<string, string>): RenderedDigest {
  const subject = digestSubject(digest);
  const intro = [
    `<h1 style="${css.h1}">plumbline weekly digest</h1>`,
    `<p style="margin:0;${css.muted}">${htmlText(digest.owner, 60)} · ${escapeHtml(digest.week)} to ${escapeHtml(digest.weekEnd)}, compared with the ${BASELINE_WEEKS} weeks before</p>`,
  ];
  const footer = [
    `<p style="margin:28px 0 0;font-size:12px;${css.muted}">Incident pages: <a href="${escapeHtml(digest.publicUrl)}">${escapeHtml(digest.publicUrl)}</a>.`,
    digest.hideValues ? ' Parameter values are hidden by configuration.' : ' Parameter values appear only for keys with few distinct values.',
    '</p>',
  ];
  const flows = digest.flows.length === 0 ? [`<p>No flows for this owner.</p>`] : digest.flows.map((flow) => flowHtml(digest, flow, images));
  const body = `<div style="${css.card}">\n${[...intro, ...flows, footer.join('')].join('\n')}\n</div>`;
  return { subject, html: htmlDocument(subject, body), body, text: renderText(digest) };
}

function textIncident(item: DigestIncident): string[] {
  const { incident, presentation: p } = item;
  const lines = [
    `  ${severityLabel(incident.severity)} ${cleanText(p.headline, NAME_MAX)}`,
    `    ${cleanText(p.where, 60)}, since ${incident.since}, ${incident.daysSeen} judged day(s), ${incident.status === 'resolved' ? `resolved ${RESOLVED_MARK} ${incident.resolvedDay}` : incident.status}`,
  ];
  if (p.observed !== null && p.expected !== null) lines.push(`    observed ${cleanText(p.observed, 40)}, expected ${cleanText(p.expected, 60)}`);
  lines.push(`    likely cause: ${cleanText(p.cause.label, 40)} (${p.cause.confidence}). ${cleanText(p.cause.sentence, MESSAGE_MAX)}`, `    ${item.url}`);
  return lines;
}

function renderText(digest: Digest): string {
  const out = [
    `plumbline weekly digest: ${cleanText(digest.owner, 60)}`,
    `${digest.week} to ${digest.weekEnd}, compared with the ${BASELINE_WEEKS} weeks before.`,
  ];
  for (const flow of digest.flows) {
    out.push('', `== ${cleanText(flow.title, NAME_MAX)} (${cleanText(flow.id, 60)}) ==`, '', 'End-to-end conversion (this week / previous weeks / change / entrants):');
    for (const c of flow.conversion) out.push(`  ${cleanText(c.platform, 40).padEnd(10)} ${pct(c.week.rate).padStart(7)} ${pct(c.baseline.rate).padStart(7)} ${change(c.week, c.baseline).padStart(9)} ${formatCount(c.week.entered).padStart(9)}`);
    out.push('', 'Step drop-off (share of entrants reaching each step, this week / previous weeks):');
    for (const step of flow.dropOff) out.push(`  ${cleanText(step.step, 40).padEnd(10)} ${step.platforms.map((p) => `${p.platform} ${pct(p.week)} / ${pct(p.baseline)}`).join('   ')}`);
    out.push('', `Incidents opened (${flow.opened.length}):`, ...(flow.opened.length === 0 ? ['  none'] : flow.opened.flatMap(textIncident)));
    out.push('', `Incidents resolved (${flow.resolved.length}):`, ...(flow.resolved.length === 0 ? ['  none'] : flow.resolved.flatMap(textIncident)));
    out.push('', `Schema changes (${flow.schemaChanges.length}):`);
    if (flow.schemaChanges.length === 0) out.push('  none');
    for (const c of flow.schemaChanges) {
      const where = [c.platform, c.version].filter(Boolean).join(' ') || 'all';
      out.push(`  ${c.firstDay} ${cleanText(where, 60)} ${cleanText(c.subject, NAME_MAX)}: ${c.message === null ? `${cleanText(c.kind, 40)} (values hidden)` : cleanText(c.message, MESSAGE_MAX)}`);
    }
    out.push('', 'Noise per check (raised / muted / incidents / one-day incidents):');
    if (flow.noise.length === 0) out.push('  no findings this week');
    for (const n of flow.noise) out.push(`  ${cleanText(n.check, 40).padEnd(12)} ${String(n.raised).padStart(5)} ${String(n.muted).padStart(5)} ${String(n.incidents).padStart(5)} ${String(n.oneDay).padStart(5)}`);
  }
  out.push('', `Incident pages: ${digest.publicUrl}`);
  if (digest.hideValues) out.push('Parameter values are hidden by configuration.');
  return `${out.join('\n')}\n`;
}
