/**
 * `/incidents/:id`: everything known about one incident. The headline and
 * status, the likely cause with its numbers, each symptom with the chart of
 * its series (expected band, flagged days) and its values as a table, the
 * per-version split when a release is blamed, and the day-by-day timeline.
 */
import type { CauseLabel } from '../../../checks/causes/types.js';
import { formatCount, formatNumber, formatPercent } from '../../../checks/messages.js';
import type { ExcerptPoint, Finding } from '../../../checks/types.js';
import { pageCharts } from '../../charts/cache.js';
import { dailySeriesChart } from '../../charts/index.js';
import { causeWords, formatMeasure, isFractionMetric, presentIncident, rankSymptoms, whereText, type IncidentPresentation } from '../../present/present.js';
import { RESOLVED_MARK } from '../../present/marks.js';
import { loadValuePolicy, paramKeysOf, valuesShown, type ValuePolicy } from '../../present/privacy.js';
import { cleanText, escapeHtml, htmlText } from '../../present/text.js';
import { loadIncident } from '../../incidents/store.js';
import type { Incident, Sighting } from '../../incidents/types.js';
import type { PagesContext } from './context.js';
import { clientText, dataTable, dayText, facts, formatInstant, keyWords, NAME_MAX, none, pageDocument, SENTENCE_MAX, severityText, versionText } from './layout.js';
import { loadVersionSplit, rateOf, type Ratio, type VersionSplit } from './versions.js';

/** Charts drawn per page; further symptoms are listed with their values only. */
const MAX_CHARTS = 12;

/** What each cause label means, in one sentence (the evidence order of the design notes). */
const CAUSE_MEANING: Record<CauseLabel, string> = {
  data_delay: 'Events arrived late or stopped arriving for everyone: the data moved, not the people.',
  release: 'The change sits in one app version: compared with the other versions on the same platform and days, only this one moved.',
  platform: 'One platform moved away from the others and no single app version explains it.',
  segment: 'One slice of an extra dimension (such as a country or channel) explains most of the change.',
  calendar: 'The day is a declared holiday or campaign in the calendar, where a change is expected.',
  behaviour: 'The whole flow moved on every platform in proportion: most likely people did something different, not the tracking.',
};

export interface Symptom {
  finding: Finding;
  /** The judged day of the newest sighting that had this symptom. */
  seenOn: string;
  /** The finding's own message may be shown (no hidden parameter values in it). */
  shown: boolean;
}

export interface IncidentPage {
  incident: Incident;
  sightings: Sighting[];
  latest: Sighting | undefined;
  presentation: IncidentPresentation;
  /** Headline per sighting day, as privacy allows. */
  headlines: Map<string, string>;
  symptoms: Symptom[];
  /** Title and id of each flow the incident holds back. */
  flowTitles: Array<{ id: string; title: string }>;
  split: VersionSplit | undefined;
  /** The incident is blamed on a release but no split could be read (and why). */
  splitMissing: string | null;
  timezone: string;
  demo: boolean;
}

/**
 * Every distinct symptom (check, kind, series) over the sightings, each in
 * its newest form: a symptom that stopped showing still belongs to the story.
 */
function distinctSymptoms(sightings: readonly Sighting[]): Array<{ finding: Finding; seenOn: string }> {
  const seen = new Map<string, { finding: Finding; seenOn: string }>();
  for (const sighting of [...sightings].reverse()) {
    for (const finding of sighting.symptoms) {
      const key = `${finding.check}\u0000${finding.kind}\u0000${finding.seriesKey}`;
      if (!seen.has(key)) seen.set(key, { finding, seenOn: sighting.day });
    }
  }
  const ranked = rankSymptoms([...seen.values()].map((s) => s.finding));
  return ranked.map((finding) => [...seen.values()].find((s) => s.finding === finding)!);
}

export async function loadIncidentPage(ctx: PagesContext, id: string): Promise<IncidentPage | undefined> {
  const { state: db, stateSchema: schema } = ctx.rt;
  const loaded = await loadIncident(db, schema, id);
  if (!loaded) return undefined;
  const { incident, sightings } = loaded;
  const latest = sightings.at(-1);
  const found = distinctSymptoms(sightings);
  const values: ValuePolicy = await loadValuePolicy(
    db,
    schema,
    ctx.rt.config.main.delivery.hide_values,
    paramKeysOf(sightings.flatMap((s) => s.symptoms)),
    incident.since,
    incident.lastSeenDay,
  );
  const flow = ctx.rt.flows.find((f) => f.id === incident.flow);
  const titleOf = (id: string) => ctx.rt.config.flows.find((f) => f.config.flow === id)?.config.title ?? id;
  const cause = latest?.cause;
  let split: VersionSplit | undefined;
  let splitMissing: string | null = null;
  if ((cause?.label ?? incident.causeLabel) === 'release') {
    const platform = cause?.platform ?? incident.platform;
    const version = cause?.version ?? incident.version;
    if (!flow) splitMissing = `the flow ${incident.flow} is no longer configured`;
    else if (platform === null || version === null) splitMissing = 'the cause names no platform and version';
    else {
      const result = await loadVersionSplit(db, schema, { flow, platform, version, symptoms: found.map((s) => s.finding), since: incident.since, lastSeen: incident.lastSeenDay });
      if ('split' in result) split = result.split;
      else splitMissing = result.missing;
    }
  }
  return {
    incident,
    sightings,
    latest,
    presentation: presentIncident(incident, latest, values),
    headlines: new Map(sightings.map((s) => [s.day, presentIncident(incident, s, values).headline])),
    symptoms: found.map(({ finding, seenOn }) => ({ finding, seenOn, shown: valuesShown(values, [finding]) })),
    flowTitles: incident.flows.map((id) => ({ id, title: titleOf(id) })),
    split,
    splitMissing,
    timezone: ctx.rt.timezone,
    demo: ctx.status.demo,
  };
}

const ROOT = '../';

function statusText(incident: Incident): string {
  if (incident.status !== 'resolved') return `${escapeHtml(incident.status)}${incident.muted ? ' (muted: recorded, not announced)' : ''}`;
  const how =
    incident.resolution === 'late_data'
      ? 'late data: late rows restated its first day, and judged again with them it no longer showed'
      : incident.resolution === 'withdrawn'
        ? 'withdrawn: a rerun of its days no longer showed it'
        : 'not seen again for the configured number of judged days';
  return `resolved ${RESOLVED_MARK} on ${dayText(incident.resolvedDay)} (${escapeHtml(how)})`;
}

function headSection(p: IncidentPage): string {
  const { incident, presentation } = p;
  const announced =
    incident.notifiedSeverity === null
      ? `never announced in chat${incident.muted ? ' (muted)' : ''}`
      : `announced in chat as ${incident.notifiedSeverity}${incident.lastNotifiedAt ? `, last on ${formatInstant(incident.lastNotifiedAt, p.timezone)}` : ''}`;
  return `<h1>${htmlText(presentation.headline, NAME_MAX * 2)}</h1>
<p>${severityText(incident.severity)} · ${statusText(incident)}</p>
${facts([
  ['incident', `<code>${escapeHtml(incident.id)}</code>`],
  [p.flowTitles.length === 1 ? 'flow' : 'flows', p.flowTitles.map(({ id, title }) => `${clientText(title)} (${clientText(id)})`).join(', ')],
  [incident.owners.length === 1 ? 'owner' : 'owners', incident.owners.map((owner) => clientText(owner)).join(', ')],
  ['where', clientText(presentation.where)],
  ['subject', clientText(incident.subject)],
  ['since', `${dayText(incident.since)} <span class="muted">(first anomalous day)</span>`],
  ['opened', dayText(incident.openedDay)],
  ['last seen', `${dayText(incident.lastSeenDay)} <span class="muted">(seen on ${incident.daysSeen} judged day${incident.daysSeen === 1 ? '' : 's'})</span>`],
  ...(presentation.observed !== null && presentation.expected !== null
    ? ([['observed', `${clientText(presentation.observed, 40)} ${clientText(presentation.metric, 60)}, expected ${clientText(presentation.expected, 60)}`]] as Array<[string, string]>)
    : []),
  ['chat', escapeHtml(announced)],
])}`;
}

/** Evidence keys whose numbers are fractions (versionRate, adoption, share_change), shown as percentages. */
const FRACTION_KEY = /rate|share|ratio|conversion|completion|adoption/i;

/** The presented value, or a percentage for a fraction: numbers are never hidden, so the raw one may be shown. */
function evidenceValue(raw: number | string | null | undefined, presented: string, key: string): string {
  return typeof raw === 'number' && FRACTION_KEY.test(key) && Math.abs(raw) <= 1 ? formatPercent(raw) : presented;
}

function causeSection(p: IncidentPage): string {
  const cause = p.latest?.cause;
  const label = cause?.label ?? p.incident.causeLabel;
  const meaning = CAUSE_MEANING[label as CauseLabel] as string | undefined;
  const parts = [
    `<h2 id="cause">Likely cause: ${htmlText(causeWords(label), 60)}</h2>`,
    `<p class="muted">${escapeHtml(meaning ?? `Cause label "${cleanText(label, 40)}" has no description on this page yet.`)}</p>`,
  ];
  if (!cause) return [...parts, none('No sighting recorded the cause analysis.')].join('\n');
  parts.push(`<p>${p.presentation.cause.sentence === '' ? '<span class="muted">No sentence recorded.</span>' : htmlText(p.presentation.cause.sentence, SENTENCE_MAX)}</p>`);
  const entries: Array<[string, string]> = [
    ['confidence', escapeHtml(p.presentation.cause.confidence)],
    ['platform', clientText(cause.platform ?? 'all platforms', 40)],
    ['version', cause.version === null ? '<span class="muted">any</span>' : versionText(cause.version)],
  ];
  if (cause.segment) {
    entries.push(['explanatory power', escapeHtml(formatNumber(cause.segment.explanatoryPower))], ['surprise', escapeHtml(formatNumber(cause.segment.surprise))]);
  }
  parts.push(facts(entries));
  const evidence = p.presentation.cause.evidence;
  parts.push(
    evidence.length === 0
      ? none('No evidence numbers recorded.')
      : dataTable({
          caption: 'The numbers behind the label (from the newest sighting).',
          columns: [{ label: 'evidence' }, { label: 'value' }],
          rows: evidence.map(({ key, value }) => ({ cells: [clientText(keyWords(key), 60), clientText(evidenceValue(cause.evidence[key], value, key), 80)] })),
        }),
  );
  if (p.presentation.valuesHidden) parts.push(`<p class="muted">Parameter values are not shown: values are hidden by configuration, or a key had too many distinct values.</p>`);
  return parts.join('\n');
}

function pct(ratio: Ratio, percent: boolean): string {
  const rate = rateOf(ratio);
  if (rate === null) return '-';
  return percent ? formatPercent(rate) : formatNumber(rate);
}

function splitSection(p: IncidentPage): string {
  if (p.split === undefined) {
    return p.splitMissing === null ? '' : `<h2 id="versions">Per app version</h2>${none(`No per-version split: ${p.splitMissing}.`)}`;
  }
  const s = p.split;
  const row = (version: string, ratio: Ratio, blamed = false) => ({
    cells: [
      `${versionText(version)}${blamed ? ' <strong>(blamed)</strong>' : ''}`,
      escapeHtml(formatCount(ratio.den)),
      escapeHtml(formatCount(ratio.num)),
      escapeHtml(pct(ratio, s.labels.percent)),
    ],
    ...(blamed ? { className: 'blamed' } : {}),
  });
  const columns = [{ label: 'app version' }, { label: s.labels.den, numeric: true }, { label: s.labels.num, numeric: true }, { label: s.labels.measure, numeric: true }];
  const rows = s.versions.map(({ version, ratio }) => row(version, ratio, version === s.version));
  if (s.others) rows.push({ cells: [escapeHtml(`${s.others.count} smaller versions`), escapeHtml(formatCount(s.others.ratio.den)), escapeHtml(formatCount(s.others.ratio.num)), escapeHtml(pct(s.others.ratio, s.labels.percent))] });
  rows.push({ cells: ['every version except the blamed one', escapeHtml(formatCount(s.rest.den)), escapeHtml(formatCount(s.rest.num)), escapeHtml(pct(s.rest, s.labels.percent))] });
  const period = s.from === s.to ? `on ${s.from}` : `from ${s.from} to ${s.to}`;
  return `<h2 id="versions">Per app version on ${htmlText(s.platform, 40)}</h2>
<p>${htmlText(s.labels.measure, NAME_MAX)}, per app version ${escapeHtml(period)}: the blamed version against the others on the same platform and days.</p>
${dataTable({
  caption: `People summed over the days ${period} (a person counted once per day), from the daily rollups.`,
  columns,
  rows,
  foot: [`all versions (${htmlText(s.platform, 40)} total)`, escapeHtml(formatCount(s.total.den)), escapeHtml(formatCount(s.total.num)), escapeHtml(pct(s.total, s.labels.percent))],
})}
${dataTable({
  caption: `Day by day: ${cleanText(s.version === '' ? '(no version)' : s.version, 40)} against every other version.`,
  columns: [{ label: 'day' }, { label: `blamed version: ${s.labels.num}`, numeric: true }, { label: 'blamed version', numeric: true }, { label: 'other versions', numeric: true }],
  rows: s.days.map((d) => ({ cells: [dayText(d.day), escapeHtml(formatCount(d.blamed.num)), escapeHtml(pct(d.blamed, s.labels.percent)), escapeHtml(pct(d.rest, s.labels.percent))] })),
})}`;
}

function band(metric: string, point: ExcerptPoint): string {
  return point.expectedLow === undefined || point.expectedHigh === undefined ? '-' : `${formatMeasure(metric, point.expectedLow)} to ${formatMeasure(metric, point.expectedHigh)}`;
}

function seriesTable(finding: Finding, points: readonly ExcerptPoint[], caption: string): string {
  return dataTable({
    caption,
    columns: [{ label: 'day' }, { label: finding.metric, numeric: true }, { label: 'expected', numeric: true }, { label: 'flagged' }],
    rows: points.map((point) => ({
      cells: [
        dayText(point.day),
        escapeHtml(point.value === null ? '-' : formatMeasure(finding.metric, point.value)),
        escapeHtml(band(finding.metric, point)),
        point.flagged ? '<strong>flagged</strong>' : '',
      ],
      ...(point.flagged ? { className: 'flagged' } : {}),
    })),
  });
}

async function symptomSection(symptom: Symptom, index: number, drawChart: boolean): Promise<string> {
  const { finding, shown } = symptom;
  const where = whereText(finding.platform, finding.version);
  const subject = finding.subject.name;
  const message = shown ? finding.message : `${finding.kind} ${finding.metric} of ${subject} on ${where} (parameter values not shown)`;
  const parts = [
    `<section class="symptom" aria-labelledby="symptom-${index}">`,
    `<h3 id="symptom-${index}">${htmlText(`${finding.check}: ${finding.metric} of ${subject} on ${where}`, NAME_MAX)}</h3>`,
    `<p>${htmlText(message, SENTENCE_MAX)}</p>`,
    facts([
      ['severity', severityText(finding.severity)],
      ['check', `${clientText(finding.check, 40)} (${clientText(finding.kind, 40)})`],
      ['where', clientText(where)],
      ['observed', escapeHtml(formatMeasure(finding.metric, finding.observed))],
      ['expected', escapeHtml(`${formatMeasure(finding.metric, finding.expected.low)} to ${formatMeasure(finding.metric, finding.expected.high)} (center ${formatMeasure(finding.metric, finding.expected.center)})`)],
      ['score', escapeHtml(`${formatNumber(finding.score)} (${finding.direction})`)],
      ['since', dayText(finding.since ?? finding.day)],
      ['last seen', dayText(symptom.seenOn)],
      ...(finding.calendar ? ([['calendar', clientText(finding.calendar)]] as Array<[string, string]>) : []),
      ...(finding.muted ? ([['muted', clientText(finding.muted)]] as Array<[string, string]>) : []),
    ]),
  ];
  const points = finding.excerpt;
  const flagged = points.filter((point) => point.flagged);
  if (points.length > 0 && drawChart) {
    const chart = dailySeriesChart(points, { title: `${finding.metric} of ${subject} on ${where}`, percent: isFractionMetric(finding.metric) });
    const svg = await pageCharts.svg(chart);
    // role="img" turns the drawing into one image for assistive technology; the tables below carry the numbers.
    parts.push(`<figure class="chart"><div role="img" aria-label="${escapeHtml(chart.alt)}">${svg}</div>
<figcaption>Daily ${htmlText(finding.metric, 60)} (line), expected range (shaded band) and flagged days (red dots).</figcaption></figure>`);
  }
  if (flagged.length > 0) parts.push(seriesTable(finding, flagged, `Flagged days (${flagged.length}).`));
  if (points.length > 0) parts.push(`<details><summary>All ${points.length} days of the series</summary>${seriesTable(finding, points, 'The series the check judged.')}</details>`);
  parts.push('</section>');
  return parts.join('\n');
}

async function symptomsSection(p: IncidentPage): Promise<string> {
  const header = `<h2 id="symptoms">Symptoms (${p.symptoms.length})</h2>`;
  if (p.symptoms.length === 0) return `${header}${none('No symptoms recorded.')}`;
  const sections = await Promise.all(p.symptoms.map((symptom, i) => symptomSection(symptom, i + 1, i < MAX_CHARTS)));
  const more = p.symptoms.length > MAX_CHARTS ? `<p class="muted">Charts are drawn for the first ${MAX_CHARTS} symptoms; the others show their values only.</p>` : '';
  return `${header}\n<p class="muted">Every finding grouped into this incident, in the order they speak for it.</p>${more}\n${sections.join('\n')}`;
}

function timelineSection(p: IncidentPage): string {
  const header = `<h2 id="timeline">Timeline</h2>`;
  if (p.sightings.length === 0) return `${header}${none('No sightings recorded.')}`;
  return `${header}
${dataTable({
  caption: 'Each judged day the incident was seen, oldest first.',
  columns: [{ label: 'judged day' }, { label: 'severity' }, { label: 'since' }, { label: 'likely cause' }, { label: 'symptoms', numeric: true }, { label: 'headline' }],
  rows: p.sightings.map((s) => ({
    cells: [
      dayText(s.day),
      `${severityText(s.severity)}${s.muted ? ' <span class="muted">(muted)</span>' : ''}`,
      dayText(s.since),
      clientText(causeWords(s.cause.label)),
      String(s.symptoms.length),
      clientText(p.headlines.get(s.day), NAME_MAX),
    ],
  })),
})}`;
}

export async function renderIncidentPage(p: IncidentPage): Promise<string> {
  const html = [headSection(p), causeSection(p), splitSection(p), await symptomsSection(p), timelineSection(p), `<p><a href="${ROOT}">Back to the overview</a></p>`].join('\n');
  return pageDocument({ title: p.presentation.headline, html, root: ROOT, demo: p.demo });
}

export function renderIncidentNotFound(id: string, demo: boolean): string {
  return pageDocument({
    title: 'Incident not found',
    html: `<h1>Incident not found</h1><p>No incident has the id <code>${escapeHtml(cleanText(id, NAME_MAX))}</code>. Incident ids look like <code>monthly_pass-20261118-1a2b3c4d</code>.</p><p><a href="${ROOT}">Open incidents are listed on the overview.</a></p>`,
    root: ROOT,
    demo,
  });
}
