/**
 * The scenario generator's plans over many seeds, without a database: every
 * plan is deterministic, loads through the real config loader, keeps its
 * incidents after the cold start and inside its days, and the seeds together
 * cover the ranges the evaluation promises (README.md in service/scenarios).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { INCIDENT_TYPES } from '../../service/scenarios/catalogue.js';
import { writeScenarioConfig } from '../../service/scenarios/config.js';
import { fillQueries, pipelineFaultQueries } from '../../service/scenarios/generate.js';
import { COMPACT, FIRST_INCIDENT_DAY, drawScenario, lastDay } from '../../service/scenarios/model.js';

const SEEDS = Array.from({ length: 120 }, (_, i) => i + 1);
const plans = SEEDS.map((seed) => drawScenario(seed));
const dir = mkdtempSync(join(tmpdir(), 'plumbline-scenarios-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('scenario plans', () => {
  it('are the same for the same seed and differ between seeds', () => {
    expect(drawScenario(7)).toEqual(drawScenario(7));
    expect(new Set(plans.map((p) => `${p.app}|${p.table}|${p.timezone}|${p.days}`)).size).toBeGreaterThan(100);
  });

  it('write configurations the real loader accepts', async () => {
    for (const plan of plans.slice(0, 40)) {
      const config = await writeScenarioConfig(plan, join(dir, String(plan.seed)), 'eval_x', 'postgres://u@h/d');
      expect(config.flows.map((f) => f.config.flow).sort()).toEqual(plan.flows.map((f) => f.id).sort());
      expect(config.main.warehouse.columns).toEqual(plan.columns);
    }
  });

  it('stay in the promised ranges', () => {
    const days = plans.map((p) => p.days);
    expect(Math.min(...days)).toBeGreaterThanOrEqual(60);
    expect(Math.max(...days)).toBeLessThanOrEqual(200);
    const journeys = plans.map((p) => p.journeysPerDay).sort((a, b) => a - b);
    expect(journeys[0]).toBeGreaterThanOrEqual(300);
    expect(journeys[journeys.length - 1]).toBeLessThanOrEqual(20_000);
    // Most small, a few large.
    expect(journeys[Math.floor(journeys.length / 2)]).toBeLessThan(2_000);
    expect(journeys.filter((j) => j > 8_000).length).toBeGreaterThan(2);
    for (const plan of plans) {
      expect(plan.flows.length).toBeGreaterThanOrEqual(1);
      expect(plan.flows.length).toBeLessThanOrEqual(3);
      for (const flow of plan.flows) expect(flow.steps.length).toBeGreaterThanOrEqual(2);
      for (const flow of plan.flows) expect(flow.steps.length).toBeLessThanOrEqual(6);
      expect(plan.dimensions.length).toBeLessThanOrEqual(3);
      for (const d of plan.dimensions) expect(d.values.length).toBeGreaterThanOrEqual(3);
    }
    const compact = SEEDS.slice(0, 20).map((seed) => drawScenario(seed, COMPACT));
    expect(Math.max(...compact.map((p) => p.days))).toBeLessThanOrEqual(COMPACT.maxDays);
  });

  it('vary the events table, platforms and timezones', () => {
    const timezones = new Set(plans.map((p) => p.timezone));
    // Both hemispheres' daylight saving and fixed offsets.
    for (const zone of ['Australia/Sydney', 'America/Santiago', 'Europe/Berlin', 'Etc/GMT+5']) expect(timezones).toContain(zone);
    const spellings = new Set(plans.flatMap((p) => p.platforms.flatMap((pl) => pl.raw.map((r) => r.value))));
    for (const raw of ['Web', 'web', 'WEB', 'Android', 'and']) expect(spellings).toContain(raw);
    expect(new Set(plans.flatMap((p) => p.platforms.map((pl) => pl.versionFormat)))).toEqual(new Set([null, 'semver', 'two_part', 'build', 'calendar']));
    expect(new Set(plans.map((p) => p.columns.time)).size).toBeGreaterThan(4);
    expect(new Set(plans.map((p) => p.dimensions.length))).toEqual(new Set([0, 1, 2, 3]));
    const slow = plans.flatMap((p) => p.platforms.flatMap((pl) => pl.releases.filter((r) => r.rate < 0.5)));
    const fast = plans.flatMap((p) => p.platforms.flatMap((pl) => pl.releases.filter((r) => r.rate > 0.5)));
    expect(slow.length).toBeGreaterThan(50);
    expect(fast.length).toBeGreaterThan(50);
  });

  it('draw every incident type, after the cold start and inside the days, with overlaps', () => {
    const types = new Map<string, number>();
    let overlapping = 0;
    for (const plan of plans) {
      for (const truth of plan.truths) {
        expect(truth.firstDay >= plan.from && truth.lastDay <= lastDay(plan), truth.id).toBe(true);
        expect(truth.firstDay >= drawScenario(plan.seed).from).toBe(true);
      }
      const windows = [...new Map(plan.truths.map((t) => [t.id.split('/')[0], t])).values()];
      for (const t of windows) types.set(t.type, (types.get(t.type) ?? 0) + 1);
      if (windows.some((a) => windows.some((b) => a !== b && a.firstDay <= b.lastDay && b.firstDay <= a.lastDay))) overlapping++;
      const first = plan.truths.map((t) => t.firstDay).sort()[0];
      if (first) expect(Date.parse(first) - Date.parse(plan.from)).toBeGreaterThanOrEqual(FIRST_INCIDENT_DAY * 86_400_000);
    }
    for (const type of INCIDENT_TYPES) expect(types.get(type) ?? 0, type).toBeGreaterThanOrEqual(15);
    expect(overlapping).toBeGreaterThan(plans.length / 2);
  });

  it('generate SQL whose every parameter is used (an unused one has no type and fails in PostgreSQL)', () => {
    for (const plan of plans) {
      for (const query of [...fillQueries(plan, 'eval_x'), ...pipelineFaultQueries(plan, 'eval_x')]) {
        for (let i = 1; i <= query.values.length; i++) expect(new RegExp(`\\$${i}(?!\\d)`).test(query.text), `seed ${plan.seed} $${i}`).toBe(true);
      }
    }
  });
});
