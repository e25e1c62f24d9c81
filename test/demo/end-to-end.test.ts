/**
 * The whole pipeline on the demo scenario, scored against its ground truth
 * (service/demo/ground-truth.ts): five months of generated events, rolled up
 * and judged day by day as `plumbline demo` does, then
 * - every injected incident yields a finding of each expected check, on the
 *   right platform and day (plus or minus one day);
 * - it becomes one incident with the right cause label (and version); the
 *   collector delay that holds back both flows is one incident listing both;
 * - no note reaches chat, and the terminal shows every incident within its
 *   first 80 lines;
 * - false findings on clean days stay at most one per flow per 30 judged days.
 * The confusion counts are printed.
 */
import { execFileSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatDiff } from '../../service/cli/commands/backtest.js';
import { PICTURE_DAYS, formatSummary, loadSummary } from '../../service/cli/summary.js';
import { addDays } from '../../checks/time.js';
import type { Finding } from '../../checks/types.js';
import { loadConfig } from '../../service/config/load.js';
import { quoteIdent } from '../../service/db/sql.js';
import { prepareDemo, type DemoResult } from '../../service/demo/prepare.js';
import { groundTruth, type Incident } from '../../service/demo/scenario.js';
import { listIncidents, latestSightings } from '../../service/incidents/store.js';
import type { Incident as StoredIncident } from '../../service/incidents/types.js';
import { createLogger } from '../../service/log.js';
import { backtest, loadConfigAtRef } from '../../service/pipeline/backtest.js';
import { openRuntime, type Runtime } from '../../service/runtime.js';
import { findingsQuery, type StoredFinding } from '../../service/state/summary.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';

type Judged = StoredFinding & { flow: string; day: string };

function touches(incident: Incident, flow: string, platform: string | null, day: string, tolerance = 1): boolean {
  return (
    (incident.flow === null || incident.flow === flow) &&
    (incident.platform === null || platform === null || incident.platform === platform) &&
    day >= addDays(incident.firstDay, -tolerance) &&
    day <= addDays(incident.lastDay, tolerance)
  );
}

function explains(incident: Incident, finding: Finding & { flow: string }): boolean {
  return touches(incident, finding.flow, finding.platform, finding.day) && [...incident.expectedChecks, ...incident.alsoAcceptable].includes(finding.check as never);
}

describe('demo scenario end to end', () => {
  let db: TestSchema;
  let rt: Runtime;
  let demo: DemoResult;
  let findings: Judged[];
  let incidents: Array<StoredIncident & { version: string | null }>;

  beforeAll(async () => {
    db = await createTestSchema('demo');
    const config = loadConfig('config', { env: {} });
    config.main.warehouse.events_table = `${db.schema}.events`;
    config.main.state.schema = `${db.schema}_state`;
    config.main.delivery.outbox_dir = `.plumbline/test-outbox-${db.schema}`;
    rt = await openRuntime(config, { env: { PLUMBLINE_WAREHOUSE_URL: db.url }, log: createLogger({ level: 'warn' }) });
    demo = await prepareDemo(rt, { quiet: true, dir: `.plumbline/test-demo-${db.schema}` });
    findings = (await rt.state.query<Judged>(findingsQuery(rt.stateSchema, demo.judgedFrom, demo.to))).rows;
    incidents = await listIncidents(rt.state, rt.stateSchema, { flows: rt.flows.map((f) => f.id), from: demo.judgedFrom, to: demo.to });
  }, 600_000);

  afterAll(async () => {
    await rt?.state.query(`drop schema if exists ${quoteIdent(rt.stateSchema)} cascade`);
    await rt?.close();
    await db?.drop();
  });

  it('finds every injected incident with each expected check, platform and day', () => {
    const rows: string[] = [];
    const misses: string[] = [];
    for (const incident of groundTruth) {
      for (const check of incident.expectedChecks) {
        const hits = findings.filter((f) => f.check === check && touches(incident, f.flow, f.platform, f.day));
        rows.push(`${incident.id.padEnd(28)} ${check.padEnd(10)} ${hits.length > 0 ? `found (${hits.length}, first ${hits[0]!.day})` : 'MISSED'}`);
        if (hits.length === 0) misses.push(`${incident.id}: ${check}`);
      }
    }
    console.log(`[demo end to end] detection per incident and check:\n${rows.join('\n')}`);
    expect(misses, rows.join('\n')).toEqual([]);
  });

  it('makes one incident per injected incident with the right cause', async () => {
    const sightings = await latestSightings(rt.state, rt.stateSchema, incidents.map((i) => i.id));
    const rows: string[] = [];
    const wrong: string[] = [];
    for (const incident of groundTruth) {
      const flows = incident.flow === null ? rt.flows.map((f) => f.id) : [incident.flow];
      for (const flow of flows) {
        // Incidents whose days overlap the injected one, on its platform (or any, for all-platform ones).
        const candidates = incidents.filter((i) => i.flows.includes(flow) && touches(incident, flow, i.platform, i.since) && i.lastSeenDay >= addDays(incident.firstDay, -1));
        const right = candidates.filter((i) => i.causeLabel === incident.expectedCause && (incident.causeVersion === undefined || i.version === incident.causeVersion));
        const detail = candidates.map((i) => `${i.causeLabel}${i.version ? ` ${i.version}` : ''} ${i.since}..${i.lastSeenDay}: ${sightings.get(i.id)?.cause.sentence ?? ''}`);
        rows.push(`${incident.id} (${flow}): ${right.length} right of ${candidates.length}\n    ${detail.join('\n    ')}`);
        // Holidays touch every flow; a flow whose series did not move on them needs no incident.
        if (incident.kind === 'holiday' && candidates.length === 0) continue;
        if (right.length !== 1) wrong.push(`${incident.id} in ${flow}: expected one ${incident.expectedCause} incident, got ${right.length} (of ${candidates.length})`);
      }
    }
    console.log(`[demo end to end] incidents per injected incident:\n${rows.join('\n')}`);
    expect(wrong, rows.join('\n')).toEqual([]);
  });

  it('makes the collector delay one incident that holds back both flows', () => {
    const delay = groundTruth.find((truth) => truth.kind === 'collector_delay')!;
    const delays = incidents.filter((i) => i.causeLabel === 'data_delay' && i.lastSeenDay >= delay.firstDay);
    expect(delays.map((i) => [i.since, [...i.flows].sort()])).toEqual([[delay.firstDay, rt.flows.map((f) => f.id).sort()]]);
  });

  it('sends no note to chat: every message belongs to an incident that reached warn', async () => {
    const { rows } = await rt.state.query<{ severity: string; event: string; n: number }>(
      `select i.severity, o.event, count(*)::int as n from ${quoteIdent(rt.stateSchema)}.outbox o join ${quoteIdent(rt.stateSchema)}.incidents i on i.id = o.incident_id
       group by i.severity, o.event order by i.severity, o.event`,
    );
    console.log(`[demo end to end] chat messages by incident severity and event: ${JSON.stringify(rows)}`);
    expect(rows.length).toBeGreaterThan(0);
    expect(rows.filter((row) => row.severity === 'note')).toEqual([]);
    expect(incidents.some((i) => i.severity === 'note')).toBe(true);
  });

  it('prints every incident within the first 80 lines of the terminal summary', async () => {
    const lines = formatSummary(rt.flows, await loadSummary(rt, demo.judgedFrom, demo.to), { pictureDays: PICTURE_DAYS, allFindings: false }).split('\n');
    const last = lines.findIndex((line) => line.startsWith(`  #${incidents.length} `));
    expect(lines.findIndex((line) => line.startsWith('Incidents ('))).toBeGreaterThan(0);
    expect(last, lines.slice(0, 100).join('\n')).toBeGreaterThan(0);
    // Each incident takes three lines: the last one ends two lines below its number.
    expect(last + 2).toBeLessThan(80);
  });

  it('keeps false findings on clean days to at most one per flow per 30 judged days', () => {
    const judgedDays = Math.round((Date.parse(demo.to) - Date.parse(demo.judgedFrom)) / 86_400_000) + 1;
    const budget = Math.floor(judgedDays / 30);
    const lines: string[] = [];
    let over = false;
    for (const flow of rt.flows.map((f) => f.id)) {
      const own = findings.filter((f) => f.flow === flow);
      const truePositives = own.filter((f) => groundTruth.some((incident) => explains(incident, f)));
      const falsePositives = own.filter((f) => !groundTruth.some((incident) => explains(incident, f)));
      lines.push(`${flow}: ${own.length} findings, ${truePositives.length} on injected incidents, ${falsePositives.length} false (budget ${budget} over ${judgedDays} days)`);
      for (const f of falsePositives) lines.push(`    false: ${f.day} ${f.check} ${f.platform ?? 'all'} ${f.message}`);
      if (falsePositives.length > budget) over = true;
    }
    console.log(`[demo end to end] confusion counts:\n${lines.join('\n')}`);
    expect(over, lines.join('\n')).toBe(false);
  });

  it('lists findings from all seven checks', () => {
    expect([...new Set(findings.map((f) => f.check))].sort()).toEqual(['conversion', 'freshness', 'parity', 'schema', 'seasonal', 'segments', 'volume']);
  });

  it('replays the judged days in a backtest exactly as the live runs judged them', async () => {
    const days = Math.round((Date.parse(demo.to) - Date.parse(demo.judgedFrom)) / 86_400_000) + 1;
    const replay = await backtest(rt, { days, to: demo.to });
    const key = (f: Judged) => `${f.flow}|${f.day}|${f.check}|${f.seriesKey}|${f.kind}`;
    const comparable = (rows: Judged[]) => rows.map(({ id: _id, ...f }) => f).sort((a, b) => key(a as Judged).localeCompare(key(b as Judged)));
    expect(comparable(replay.findings as Judged[])).toEqual(comparable(findings));
    const summary = (list: Array<{ id: string; causeLabel: string; openedDay: string; lastSeenDay: string; resolvedDay: string | null }>) =>
      list.map((i) => `${i.id} ${i.causeLabel} ${i.openedDay} ${i.lastSeenDay} ${i.resolvedDay ?? '-'}`).sort();
    expect(summary(replay.incidents)).toEqual(summary(incidents));
    // Nothing of the backtest stays behind: the live state is what the demo left.
    expect((await rt.state.query(findingsQuery(rt.stateSchema, demo.judgedFrom, demo.to))).rows.length).toBe(findings.length);
  });

  it('compares a configuration with an earlier git commit of it', async () => {
    const repo = mkdtempSync(join(tmpdir(), 'plumbline-config-repo-'));
    try {
      const git = (...args: string[]) => execFileSync('git', ['-c', 'user.email=test@metropass.example', '-c', 'user.name=test', ...args], { cwd: repo });
      cpSync('config', join(repo, 'config'), { recursive: true });
      git('init', '-q');
      git('add', '.');
      git('commit', '-q', '-m', 'config as reviewed');
      // The change under review: the volume check tolerates drops up to 80% on the pass flow.
      const flowFile = join(repo, 'config', 'flows', 'monthly-pass.yaml');
      writeFileSync(flowFile, readFileSync(flowFile, 'utf8').replace(/^watch:/m, 'checks:\n  volume: { max_drop: 80%, page_drop: 90% }\nwatch:'));
      git('commit', '-q', '-am', 'looser volume drops');

      const days = 60;
      const after = await backtest(rt, { days, to: demo.to, config: loadConfigAtRef(join(repo, 'config'), 'HEAD', {}) });
      const before = await backtest(rt, { days, to: demo.to, config: loadConfigAtRef(join(repo, 'config'), 'HEAD~1', {}) });
      const volume = (result: typeof after) => result.findings.filter((f) => f.check === 'volume' && f.flow === 'monthly_pass' && !f.muted).length;
      expect(volume(after)).toBeLessThan(volume(before));
      const report = formatDiff('HEAD~1', before, after);
      console.log(`[demo end to end] backtest --against HEAD~1:\n${report}`);
      expect(report).toContain('### plumbline backtest');
      expect(report).toMatch(/\| volume \| android \| \d+ \| \d+ \| -\d+ \|/);
    } finally {
      rmSync(repo, { recursive: true, force: true });
    }
  });
});
