/**
 * The per-version split of the incident page reads the measure the cause
 * analysis uses for each kind of symptom from the right rollup rows: version
 * rows only (the '*' row is the platform total, dimension rows stay out),
 * summed over the incident's days.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FlowDefinition, Finding } from '../../checks/types.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { loadVersionSplit, type SplitResult, type VersionSplit } from '../../service/http/pages/versions.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';

const FLOW: FlowDefinition = {
  id: 'monthly_pass',
  owner: 'growth-analytics',
  steps: [
    { name: 'intro', event: 'screen_shown', where: { view: 'pass_intro' } },
    { name: 'zone', event: 'screen_shown', where: { view: 'zone_picker' } },
    { name: 'rider', event: 'screen_shown', where: { view: 'rider_details' } },
  ],
  conversionWindowSeconds: 1800,
  stepTimeCapSeconds: 300,
  entry: 'first_step_only',
  platforms: ['web', 'android', 'ios'],
  events: ['screen_shown', 'zone_selected'],
  contracts: {},
};
const DAYS = ['2026-10-14', '2026-10-15', '2026-10-16'];

/** Per day and version: 7.4.0 is blamed, 7.3.0 is the rest, '*' is the platform total. */
const STEP_PEOPLE = { '7.4.0': [100, 50, 10], '7.3.0': [200, 160, 150], '*': [300, 210, 160] } as const;
const FUNNEL_REACHED = { '7.4.0': [100, 50, 5], '7.3.0': [200, 150, 100], '*': [300, 200, 105] } as const;
const EVENTS = { '7.4.0': { people: 5, events: 10 }, '7.3.0': { people: 150, events: 600 }, '*': { people: 155, events: 610 } } as const;

function symptom(subject: Finding['subject'], metric: string): Finding {
  return {
    check: 'volume',
    kind: 'drop',
    flow: FLOW.id,
    subject,
    metric,
    platform: 'android',
    version: null,
    day: DAYS[2]!,
    observed: 0,
    expected: { low: 0, high: 1, center: 0.5 },
    score: -5,
    direction: 'down',
    severity: 'warn',
    message: 'test',
    seriesKey: 'test',
    excerpt: [],
  };
}

describe('per-version split', () => {
  let db: TestSchema;

  beforeAll(async () => {
    db = await createTestSchema('pv');
    await migrate(db.pool, db.schema);
    const s = quoteIdent(db.schema);
    for (const day of DAYS) {
      for (const [version, people] of Object.entries(STEP_PEOPLE)) {
        for (const [step, n] of people.entries()) {
          await db.pool.query({ text: `insert into ${s}.step_days values ($1, 'monthly_pass', $2, 'android', $3, $4, $4)`, values: [day, step, version, n] });
        }
      }
      for (const [version, reached] of Object.entries(FUNNEL_REACHED)) {
        for (const [step, n] of reached.entries()) {
          // Three of 7.3.0's people at rider started there (only counts with entry: any_step).
          const entered = version === '7.3.0' && step === 2 ? 3 : step === 0 ? n : 0;
          await db.pool.query({
            text: `insert into ${s}.funnel_days (day, flow, platform, version, dimension, value, step, entered, reached, timed) values ($1, 'monthly_pass', 'android', $2, '', '', $3, $4, $5, 0)`,
            values: [day, version, step, entered, n],
          });
        }
      }
      // A dimension breakdown and another platform: neither belongs in the split.
      await db.pool.query({
        text: `insert into ${s}.funnel_days (day, flow, platform, version, dimension, value, step, entered, reached, timed) values ($1, 'monthly_pass', 'android', '*', 'country', 'US', 2, 0, 9999, 0), ($1, 'monthly_pass', 'ios', '7.4.0', '', '', 2, 0, 9999, 0)`,
        values: [day],
      });
      for (const [version, { people, events }] of Object.entries(EVENTS)) {
        await db.pool.query({ text: `insert into ${s}.event_days values ($1, 'zone_selected', 'android', $2, '', '', $3, $4)`, values: [day, version, events, people] });
      }
      await db.pool.query({ text: `insert into ${s}.event_days values ($1, 'zone_selected', 'android', '*', 'country', 'US', 9999, 9999)`, values: [day] });
    }
  });
  afterAll(async () => {
    await db?.drop();
  });

  const split = async (finding: Finding, flow = FLOW, platform = 'android'): Promise<SplitResult> =>
    await loadVersionSplit(db.pool, db.schema, { flow, platform, version: '7.4.0', symptoms: [finding], since: DAYS[1]!, lastSeen: DAYS[2]! });
  const found = (result: SplitResult): VersionSplit => {
    if (!('split' in result)) throw new Error(result.missing);
    return result.split;
  };
  const ratio = (s: VersionSplit, version: string) => s.versions.find((v) => v.version === version)?.ratio;

  it('step conversion: people at the step among people at the step before (ordered funnel), over the incident days only', async () => {
    const s = found(await split(symptom({ type: 'step', name: 'rider', step: 'rider' }, 'conversion')));
    expect(s.labels.measure).toBe('zone -> rider conversion');
    expect([s.from, s.to]).toEqual([DAYS[1], DAYS[2]]);
    expect(ratio(s, '7.4.0')).toEqual({ num: 10, den: 100 });
    expect(ratio(s, '7.3.0')).toEqual({ num: 200, den: 300 });
    expect(s.rest).toEqual({ num: 200, den: 300 });
    expect(s.total).toEqual({ num: 210, den: 400 });
    expect(s.days).toEqual([
      { day: DAYS[1], blamed: { num: 5, den: 50 }, rest: { num: 100, den: 150 } },
      { day: DAYS[2], blamed: { num: 5, den: 50 }, rest: { num: 100, den: 150 } },
    ]);
    expect(s.versions[0]!.version).toBe('7.4.0');
  });

  it('step conversion with entry: any_step leaves out people who started at the step', async () => {
    const s = found(await split(symptom({ type: 'step', name: 'rider', step: 'rider' }, 'conversion'), { ...FLOW, entry: 'any_step' }));
    expect(ratio(s, '7.3.0')).toEqual({ num: 194, den: 300 });
  });

  it('flow completion for flow subjects and the first step', async () => {
    for (const subject of [{ type: 'flow', name: 'monthly_pass' }, { type: 'step', name: 'intro', step: 'intro' }] as const) {
      const s = found(await split(symptom(subject, 'conversion')));
      expect(s.labels.measure).toBe('flow completion');
      expect(ratio(s, '7.4.0')).toEqual({ num: 10, den: 200 });
    }
  });

  it('people at a step (any order) per person at the first step', async () => {
    const s = found(await split(symptom({ type: 'step', name: 'rider', step: 'rider' }, 'people')));
    expect(ratio(s, '7.4.0')).toEqual({ num: 20, den: 200 });
    expect(s.total).toEqual({ num: 320, den: 600 });
  });

  it('people sending an event per person at the first step, and events per person', async () => {
    const people = found(await split(symptom({ type: 'event', name: 'zone_selected', event: 'zone_selected' }, 'people')));
    expect(ratio(people, '7.4.0')).toEqual({ num: 10, den: 200 });
    expect(people.total).toEqual({ num: 310, den: 600 });
    const perPerson = found(await split(symptom({ type: 'event', name: 'zone_selected', event: 'zone_selected' }, 'events_per_person')));
    expect(perPerson.labels.percent).toBe(false);
    expect(ratio(perPerson, '7.4.0')).toEqual({ num: 20, den: 10 });
  });

  it('says why there is no split', async () => {
    expect(await split(symptom({ type: 'param', name: 'zone_selected.fare_zone', event: 'zone_selected', param: 'fare_zone' }, 'share'))).toEqual({
      missing: 'its symptoms have no per-version measure (parameter and freshness findings have none)',
    });
    expect(await split(symptom({ type: 'event', name: 'zone_selected', event: 'zone_selected' }, 'people'), FLOW, 'web')).toEqual({
      missing: 'the rollups hold no web rows for people sending zone_selected per person at intro from 2026-10-15 to 2026-10-16',
    });
  });
});
