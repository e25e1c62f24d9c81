/**
 * The scorer on hand-made cases: matching rules (days, platform, version,
 * flow), one truth per incident, labels, duplication, false incidents per
 * clean flow-day, alerts and minor truths. Each expected figure is worked out
 * by hand in the case's comment (the rules are defined in
 * service/scenarios/README.md, "Scoring").
 */
import { describe, expect, it } from 'vitest';
import type { Truth } from '../../service/scenarios/catalogue.js';
import type { ObservedIncident, ScenarioRun } from '../../service/scenarios/replay.js';
import { score } from '../../service/scenarios/score.js';

function truth(over: Partial<Truth> = {}): Truth {
  return {
    id: 'release_stops_step#1/buy',
    type: 'release_stops_step',
    flow: 'buy',
    firstDay: '2026-03-10',
    lastDay: '2026-03-20',
    platform: 'android',
    version: '8.3.0',
    laterVersions: [],
    segment: null,
    expectedChecks: ['volume'],
    expectedLabel: 'release',
    alert: true,
    minor: false,
    description: '',
    ...over,
  };
}

let next = 0;
function incident(over: Partial<ObservedIncident> = {}): ObservedIncident {
  next += 1;
  return {
    id: `i${next}`,
    flow: over.flow ?? 'buy',
    flows: [over.flow ?? 'buy'],
    platform: 'android',
    version: '8.3.0',
    causeLabel: 'release',
    severity: 'warn',
    muted: false,
    chat: true,
    openedDay: '2026-03-12',
    lastSeenDay: '2026-03-14',
    resolvedDay: null,
    subject: 'pay',
    title: '',
    sentence: '',
    segment: null,
    ...over,
  };
}

/** Judged days of flow `buy`: 2026-03-01 .. 2026-03-30 (30 days). */
const MARCH = Array.from({ length: 30 }, (_, i) => `2026-03-${String(i + 1).padStart(2, '0')}`);

function run(truths: Truth[], incidents: ObservedIncident[], coldStart = 0): ScenarioRun {
  return {
    seed: 1,
    summary: { app: 'test', timezone: 'UTC', from: '2026-03-01', to: '2026-03-30', days: 30, backfillDays: 7, journeysPerDay: 1, platforms: [], flows: [], dimensions: [], events: 0 },
    truths,
    incidents,
    coldStart: Array.from({ length: coldStart }, () => ({ flow: 'buy', day: '2026-03-02', check: 'schema', kind: 'new_key', platform: 'web', severity: 'note', message: '' })),
    judgedDays: { buy: MARCH },
    seconds: { generate: 0, backfill: 0, daily: 0 },
  };
}

interface Case {
  name: string;
  truths: Truth[];
  incidents: ObservedIncident[];
  expect: Partial<{
    recall: number;
    labelAccuracy: number;
    labelAccuracyAll: number;
    incidentsPerTruth: number;
    alertsPerTruth: number;
    falseIncidents: number;
    falsePerFlow30d: number;
    falseAlertsPerFlow30d: number;
    cleanFlowDays: number;
    truths: number;
    found: number;
  }>;
}

const CASES: Case[] = [
  {
    name: 'one incident, right release and version: found, right, one per truth, nothing false',
    truths: [truth()],
    incidents: [incident()],
    expect: { recall: 1, labelAccuracy: 1, incidentsPerTruth: 1, falseIncidents: 0, falsePerFlow30d: 0, cleanFlowDays: 30 },
  },
  {
    name: 'opened two days before the truth: false, and the truth missed',
    truths: [truth()],
    incidents: [incident({ openedDay: '2026-03-08' })],
    expect: { recall: 0, falseIncidents: 1, falsePerFlow30d: 1 },
  },
  {
    name: 'opened one day before the first day or after the last day: still the truth',
    truths: [truth()],
    incidents: [incident({ openedDay: '2026-03-09' }), incident({ openedDay: '2026-03-21' })],
    expect: { recall: 1, incidentsPerTruth: 2, falseIncidents: 0 },
  },
  {
    name: 'another flow or another platform: false',
    truths: [truth()],
    incidents: [incident({ flow: 'signup' }), incident({ platform: 'ios', version: null })],
    expect: { recall: 0, falseIncidents: 2 },
  },
  {
    name: 'all platforms matches a one-platform truth, with the wrong label',
    truths: [truth()],
    incidents: [incident({ platform: null, version: null, causeLabel: 'behaviour' })],
    expect: { recall: 1, labelAccuracy: 0, falseIncidents: 0 },
  },
  {
    name: 'another version: false; no version with label release: matched, label wrong (no version named)',
    truths: [truth()],
    incidents: [incident({ version: '8.4.0' }), incident({ version: null })],
    expect: { recall: 1, labelAccuracy: 0, incidentsPerTruth: 1, falseIncidents: 1 },
  },
  {
    name: 'a later release keeping a deliberate change is the same truth, the first incident names the release',
    truths: [truth({ type: 'release_renames_param', laterVersions: ['8.4.0'] })],
    incidents: [incident({ openedDay: '2026-03-11' }), incident({ version: '8.4.0', openedDay: '2026-03-15' })],
    expect: { recall: 1, labelAccuracy: 1, labelAccuracyAll: 0, incidentsPerTruth: 2, falseIncidents: 0 },
  },
  {
    name: 'the first incident decides the label: wrong first, right later',
    truths: [truth()],
    incidents: [incident({ openedDay: '2026-03-10', causeLabel: 'platform', version: null }), incident({ openedDay: '2026-03-13' })],
    expect: { recall: 1, labelAccuracy: 0, labelAccuracyAll: 0, incidentsPerTruth: 2 },
  },
  {
    name: 'overlapping truths: each incident goes to the truth whose label it carries',
    truths: [
      truth(),
      truth({ id: 'undeclared_holiday#2/buy', type: 'undeclared_holiday', platform: null, version: null, expectedLabel: 'behaviour', firstDay: '2026-03-15', lastDay: '2026-03-15' }),
    ],
    incidents: [incident({ openedDay: '2026-03-15' }), incident({ openedDay: '2026-03-15', platform: null, version: null, causeLabel: 'behaviour' })],
    // Clean days: 30 judged days less 03-14..03-16 around the all-platform holiday.
    expect: { recall: 1, labelAccuracy: 1, incidentsPerTruth: 1, falseIncidents: 0, cleanFlowDays: 27 },
  },
  {
    name: 'the right label outranks the exact platform when an incident fits two truths',
    truths: [
      truth({ id: 'p#1/buy', type: 'platform_event_missing', version: null, expectedLabel: 'platform' }),
      truth({ id: 'h#2/buy', type: 'undeclared_holiday', platform: null, version: null, expectedLabel: 'behaviour', firstDay: '2026-03-15', lastDay: '2026-03-15' }),
    ],
    incidents: [incident({ openedDay: '2026-03-15', version: null, causeLabel: 'behaviour' }), incident({ version: null, causeLabel: 'platform' })],
    expect: { recall: 1, labelAccuracy: 1, incidentsPerTruth: 1 },
  },
  {
    name: 'a minor truth absorbs its incidents but counts neither in recall nor duplication',
    truths: [truth({ minor: true }), truth({ id: 'x#2/buy', platform: 'web', version: null, expectedLabel: 'platform', type: 'platform_event_missing' })],
    incidents: [incident()],
    expect: { truths: 1, found: 0, recall: 0, falseIncidents: 0 },
  },
  {
    name: 'segment: label, dimension and value must all agree',
    truths: [truth({ type: 'segment_drop', platform: null, version: null, expectedLabel: 'segment', segment: { dimension: 'region', value: 'north' } })],
    incidents: [
      incident({ platform: null, version: null, causeLabel: 'segment', segment: { dimension: 'region', value: 'north, east' }, openedDay: '2026-03-10' }),
      incident({ platform: null, version: null, causeLabel: 'segment', segment: { dimension: 'region', value: 'south' }, openedDay: '2026-03-11' }),
    ],
    expect: { recall: 1, labelAccuracy: 1, labelAccuracyAll: 0, cleanFlowDays: 30 - 13 },
  },
  {
    name: 'platform label needs the platform; behaviour needs nothing more',
    truths: [
      truth({ id: 'p#1/buy', type: 'platform_event_missing', version: null, expectedLabel: 'platform' }),
      truth({ id: 'b#2/buy', type: 'conversion_regression', platform: null, version: null, expectedLabel: 'behaviour', firstDay: '2026-03-25', lastDay: '2026-03-26' }),
    ],
    incidents: [
      incident({ version: null, causeLabel: 'platform', platform: null }),
      incident({ version: null, causeLabel: 'behaviour', platform: 'android', openedDay: '2026-03-25' }),
    ],
    expect: { recall: 1, labelAccuracy: 0.5 },
  },
  {
    name: 'an incident holding back two flows is read once for each: both truths found, and false in a third flow',
    truths: [
      truth({ id: 'd#1/buy', type: 'early_stop', platform: null, version: null, expectedLabel: 'data_delay', firstDay: '2026-03-30', lastDay: '2026-03-30' }),
      truth({ id: 'd#1/signup', flow: 'signup', type: 'early_stop', platform: null, version: null, expectedLabel: 'data_delay', firstDay: '2026-03-30', lastDay: '2026-03-30' }),
    ],
    incidents: [incident({ platform: null, version: null, causeLabel: 'data_delay', openedDay: '2026-03-30', flows: ['buy', 'signup', 'browse'] })],
    // Clean flow-days: flow buy's 30 judged days less 03-29..03-30 (the other flows have none).
    expect: { recall: 1, labelAccuracy: 1, incidentsPerTruth: 1, falseIncidents: 1, cleanFlowDays: 28 },
  },
  {
    name: 'notes and muted incidents count as incidents, not as alerts',
    truths: [truth()],
    incidents: [
      incident(),
      incident({ severity: 'note', openedDay: '2026-03-13' }),
      incident({ chat: false, muted: true, openedDay: '2026-03-13' }),
      incident({ flow: 'other', severity: 'note' }),
      incident({ flow: 'other', severity: 'page' }),
    ],
    // Two false incidents over 30 clean flow-days (flow `other` has no judged days): 2 per 30 days, one of them an alert.
    expect: { incidentsPerTruth: 3, alertsPerTruth: 1, falseIncidents: 2, falsePerFlow30d: 2, falseAlertsPerFlow30d: 1 },
  },
];

describe('scorer', () => {
  it.each(CASES)('$name', ({ truths, incidents, expect: expected }) => {
    const { overall } = score([run(truths, incidents)]);
    for (const [key, value] of Object.entries(expected)) expect(overall[key as keyof typeof overall], key).toBeCloseTo(value as number, 10);
  });

  it('pools seeds: recall and rates over all truths and clean days, cold start summed', () => {
    const a = run([truth()], [incident()], 3);
    const b = { ...run([truth(), truth({ id: 'y#2/buy', platform: 'ios', version: null, expectedLabel: 'platform' })], [incident({ flow: 'buy', platform: 'web', version: null })], 2), seed: 2 };
    const { overall, types } = score([a, b]);
    // Truths: 1 + 2, found: 1. False: the web incident, over 60 clean flow-days.
    expect(overall.recall).toBeCloseTo(1 / 3, 10);
    expect(overall.falsePerFlow30d).toBeCloseTo(0.5, 10);
    expect(overall.coldStartFindings).toBe(5);
    const row = types.find((t) => t.type === 'release_stops_step')!;
    expect([row.truths, row.found, row.labels]).toEqual([3, 1, 'release 1']);
  });

  it('gives no figure without truths rather than a perfect one', () => {
    const { overall } = score([run([], [])]);
    expect(Number.isNaN(overall.recall)).toBe(true);
    expect(overall.falsePerFlow30d).toBe(0);
  });
});
