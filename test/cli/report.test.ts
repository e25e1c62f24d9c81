/**
 * What the terminal shows after `plumbline demo` and `plumbline run`: the day
 * picture, then the incidents most pressing first with their cause, then the
 * findings folded to one line per incident, check and platform. The analyst
 * reads the incidents without scrolling: on a summary the size of the demo's
 * (2 flows, 14 days shown, 11 incidents, 288 findings) they end within the
 * first 80 lines.
 */
import { describe, expect, it } from 'vitest';
import type { Severity } from '../../checks/types.js';
import { addDays, daysBetween } from '../../service/config/definitions.js';
import { dayRanges, foldFindings, formatIncidents, rankIncidents, type LinkedFinding, type ListedIncident } from '../../service/cli/report.js';
import { formatSummary, type RangeSummary } from '../../service/cli/summary.js';

const PLATFORMS = ['web', 'android', 'ios'];
const FLOWS = [
  { id: 'account_signup', platforms: PLATFORMS },
  { id: 'monthly_pass', platforms: PLATFORMS },
];

function incident(id: string, o: Partial<ListedIncident> = {}): ListedIncident {
  const flow = o.flows?.[0] ?? 'monthly_pass';
  return {
    id,
    fingerprint: id,
    flow,
    owner: 'growth-analytics',
    flows: [flow],
    owners: ['growth-analytics'],
    status: 'resolved',
    severity: 'warn',
    muted: false,
    title: `android 7.4.0: zone -> rider conversion fell (${id})`,
    subject: 'rider',
    platform: 'android',
    version: '7.4.0',
    causeLabel: 'release',
    since: '2026-10-14',
    openedDay: '2026-10-14',
    lastSeenDay: '2026-10-20',
    daysSeen: 7,
    resolvedDay: '2026-10-22',
    resolution: 'clean_days',
    notifiedSeverity: 'warn',
    lastNotifiedAt: null,
    openedAt: '2026-10-15T08:30:00.000Z',
    updatedAt: '2026-10-15T08:30:00.000Z',
    resolvedAt: null,
    cause: { label: o.causeLabel === 'data_delay' ? 'data_delay' : 'release', confidence: 0.8, sentence: `the cause of ${id}`, platform: 'android', version: '7.4.0', evidence: {} },
    symptoms: 1,
    ...o,
  };
}

function finding(incidentId: string | null, o: { check: string; platform: string | null; day: string; severity?: Severity; flow?: string; muted?: string }): LinkedFinding {
  return {
    id: 0,
    incident: incidentId,
    check: o.check,
    kind: 'drop',
    flow: o.flow ?? 'monthly_pass',
    subject: { type: 'step', name: 'rider', event: 'screen_view', step: 'rider' },
    metric: 'people',
    platform: o.platform,
    version: null,
    day: o.day,
    since: o.day,
    observed: 0,
    expected: { low: 1, high: 2, center: 1.5 },
    score: -5,
    direction: 'down',
    severity: o.severity ?? 'warn',
    message: `${o.platform ?? 'all'} ${o.check} finding on ${o.day}`,
    seriesKey: `${o.check}|${o.platform}`,
    excerpt: [],
    ...(o.muted ? { muted: o.muted } : {}),
  };
}

describe('terminal report', () => {
  it('writes consecutive days as ranges, and counts the ones past the limit', () => {
    expect(dayRanges(['2026-10-16', '2026-10-14', '2026-10-15', '2026-10-18', '2026-10-18'])).toBe('2026-10-14..2026-10-16, 2026-10-18');
    expect(dayRanges(['2026-10-31', '2026-11-01', '2026-11-03', '2026-11-05', '2026-11-06'], 2)).toBe('2026-10-31..2026-11-01, 2026-11-03, and 2 more days');
    expect(dayRanges([])).toBe('');
  });

  it('ranks unresolved incidents first, then the most severe, then the most recently seen', () => {
    const list = rankIncidents([
      incident('old-page', { severity: 'page', lastSeenDay: '2026-09-23' }),
      incident('note', { severity: 'note', lastSeenDay: '2026-11-26' }),
      incident('open-warn', { status: 'ongoing', resolvedDay: null, lastSeenDay: '2026-11-29' }),
      incident('recent-page', { severity: 'page', lastSeenDay: '2026-11-02' }),
      incident('open-note', { status: 'open', severity: 'note', resolvedDay: null, lastSeenDay: '2026-11-30' }),
    ]);
    expect(list.map((i) => i.id)).toEqual(['open-warn', 'open-note', 'recent-page', 'old-page', 'note']);
  });

  it('names the cause first, with its span, severity, state and the flows it holds back', () => {
    const delay = incident('delay', {
      causeLabel: 'data_delay',
      status: 'open',
      resolvedDay: null,
      since: '2026-11-30',
      lastSeenDay: '2026-11-30',
      daysSeen: 1,
      flows: ['account_signup', 'monthly_pass'],
      title: 'all platforms: events for 2026-11-30 from ios stopped at 14:00',
    });
    expect(formatIncidents([delay, incident('release')])).toEqual([
      '  #1  data delay · warn ▮▮▯ · 2026-11-30 (1 judged day) · open · account_signup, monthly_pass',
      '      cause: the cause of delay',
      '      seen:  all platforms: events for 2026-11-30 from ios stopped at 14:00',
      '  #2  app release · warn ▮▮▯ · 2026-10-14..2026-10-20 (7 judged days) · resolved 2026-10-22 · monthly_pass',
      '      cause: the cause of release',
      '      seen:  android 7.4.0: zone -> rider conversion fell (release)',
    ]);
  });

  it('folds findings to one line per incident, check and platform, with count, highest severity and days', () => {
    const incidents = [incident('a'), incident('b')];
    const findings = [
      ...['2026-10-14', '2026-10-15', '2026-10-16', '2026-10-20'].map((day) => finding('b', { check: 'volume', platform: 'android', day })),
      finding('b', { check: 'volume', platform: 'android', day: '2026-10-17', severity: 'page', muted: 'rollout paused' }),
      finding('b', { check: 'conversion', platform: 'android', day: '2026-10-15' }),
      finding('a', { check: 'freshness', platform: 'web', day: '2026-11-30', flow: 'account_signup' }),
      finding('a', { check: 'freshness', platform: 'web', day: '2026-11-30' }),
      finding('a', { check: 'freshness', platform: 'ios', day: '2026-11-30', severity: 'note' }),
      finding(null, { check: 'seasonal', platform: null, day: '2026-07-29' }),
    ];
    expect(foldFindings(findings, incidents)).toEqual([
      '  #1  freshness  ios         1 note 2026-11-30',
      '  #1  freshness  web         2 warn 2026-11-30',
      '  #2  conversion android     1 warn 2026-10-15',
      '  #2  volume     android     5 page 2026-10-14..2026-10-17, 2026-10-20 (1 muted)',
      '  -   seasonal   all         1 warn 2026-07-29',
    ]);
  });

  it('prints the picture, then every incident within the first 80 lines, then the folded findings; --findings lists every one', () => {
    const days = daysBetween('2026-08-01', '2026-11-30');
    const incidents = rankIncidents(
      Array.from({ length: 11 }, (_, i) =>
        incident(`incident-${i}`, {
          status: i < 2 ? 'ongoing' : 'resolved',
          resolvedDay: i < 2 ? null : addDays('2026-11-01', i),
          severity: i % 3 === 0 ? 'note' : 'warn',
          lastSeenDay: addDays('2026-10-30', i),
        }),
      ),
    );
    // 288 findings, as in the demo: many per incident, check and platform over many days.
    const findings = Array.from({ length: 288 }, (_, i) =>
      finding(incidents[i % 11]!.id, { check: ['volume', 'seasonal', 'conversion'][i % 3]!, platform: PLATFORMS[i % 3 === 0 ? 0 : (i >> 2) % 3]!, day: days[i % days.length]! }),
    );
    const summary: RangeSummary = {
      from: days[0]!,
      to: days[days.length - 1]!,
      funnels: FLOWS.flatMap((flow) => days.flatMap((day) => PLATFORMS.map((platform) => ({ day, flow: flow.id, platform, entered: 1000, completed: 450 })))),
      findings,
      judged: [
        ...FLOWS.flatMap((flow) => days.slice(0, -1).map((day) => ({ flow: flow.id, day, verdict: 'judged' as const, reason: null }))),
        ...FLOWS.map((flow) => ({ flow: flow.id, day: '2026-11-30', verdict: 'not_ready' as const, reason: 'events for 2026-11-30 stopped at 14:00' })),
      ],
      incidents,
    };
    const lines = formatSummary(FLOWS, summary, { pictureDays: 14, allFindings: false }).split('\n');
    const at = (pattern: RegExp) => lines.findIndex((line) => pattern.test(line));
    const pictures = FLOWS.map((flow) => at(new RegExp(`^${flow.id}: people entering`)));
    const incidentsAt = at(/^Incidents \(11, 2 not resolved\)/);
    const lastIncident = at(/^ {2}#11 /);
    const notReady = at(/^Not judged yet:/);
    const folded = at(/^Findings \(288\), one line per incident, check and platform/);
    expect(pictures.every((line) => line > 0 && line < incidentsAt)).toBe(true);
    expect(lines.filter((line) => /^2026-\d\d-\d\d \w{3}/.test(line))).toHaveLength(2 * 14);
    expect(incidentsAt).toBeGreaterThan(0);
    expect(lastIncident + 2).toBeLessThan(80);
    expect(notReady).toBeGreaterThan(lastIncident);
    expect(folded).toBeGreaterThan(notReady);
    const foldLines = lines.slice(folded + 1);
    expect(foldLines).toHaveLength(new Set(findings.map((f) => `${f.incident}|${f.check}|${f.platform}`)).size);
    expect(foldLines.every((line) => /^ {2}#\d+ +\w+ +\w+ +\d+ (page|warn|note) +2026-/.test(line))).toBe(true);
    // The folds add up to every finding.
    expect(foldLines.reduce((sum, line) => sum + Number(/^ {2}#\d+ +\w+ +\w+ +(\d+)/.exec(line)![1]), 0)).toBe(288);

    const every = formatSummary(FLOWS, summary, { pictureDays: 14, allFindings: true }).split('\n');
    expect(every.filter((line) => / finding on 2026-/.test(line))).toHaveLength(288);
    expect(every.findIndex((line) => /^Incidents/.test(line))).toBe(incidentsAt);
  });

  it('says on each day judged while a flow was learning how far it got', () => {
    const days = daysBetween('2026-07-01', '2026-07-03');
    const summary: RangeSummary = {
      from: days[0]!,
      to: days[days.length - 1]!,
      funnels: days.flatMap((day) => PLATFORMS.map((platform) => ({ day, flow: 'monthly_pass', platform, entered: 1000, completed: 450 }))),
      findings: [],
      judged: days.map((day, i) => ({ flow: 'monthly_pass', day, verdict: 'judged' as const, reason: i < 2 ? `learning: ${26 + i} of 28 days` : null })),
      incidents: [],
    };
    const lines = formatSummary([FLOWS[1]!], summary, { pictureDays: 14, allFindings: false }).split('\n');
    expect(lines.find((line) => line.startsWith('2026-07-01'))).toMatch(/ learning: 26 of 28 days$/);
    expect(lines.find((line) => line.startsWith('2026-07-02'))).toMatch(/ learning: 27 of 28 days$/);
    expect(lines.find((line) => line.startsWith('2026-07-03'))).not.toContain('learning');
  });
});
