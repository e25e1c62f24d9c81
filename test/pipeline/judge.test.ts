/**
 * Judging a day while the flow is still learning its history: the first days
 * are the baseline, so the checks that compare with history stay silent until
 * the flow has data on `judging.learning_days` earlier days, and the verdict
 * says how far it got ("learning: 12 of 28 days").
 */
import { describe, expect, it } from 'vitest';
import { registry } from '../../checks/registry.js';
import { ALL_VERSIONS } from '../../checks/types.js';
import { sliceInput, type FlowHistory } from '../../service/pipeline/history.js';
import { judgeDay } from '../../service/pipeline/judge.js';
import { daysEnding, flow, flowConfig, statusRows, usual } from '../checks/fixtures-volume-freshness.js';

const END = '2026-11-10';
const HISTORY_DAYS = 120;

/** A flow whose rollups start `dataDays` days before END; on END every series falls to a fifth. */
function history(dataDays: number, factor = 0.2): FlowHistory {
  const days = daysEnding(END, dataDays);
  const people = usual(2000);
  const events = days.flatMap((day, i) =>
    flow.platforms.flatMap((platform) =>
      flow.events.map((event) => {
        const n = Math.round(people(day, i) * (day === END ? factor : 1));
        return { day, event, platform, version: ALL_VERSIONS, dimension: '', value: '', events: Math.round(n * 1.5), people: n };
      }),
    ),
  );
  return { flow, from: days[0]!, to: END, events, params: [], funnel: [], steps: [], status: statusRows(days), calendar: [], dataDays: new Set(days) };
}

function judge(dataDays: number, learningDays: number) {
  const input = sliceInput(history(dataDays), END, HISTORY_DAYS, {}, `${END}T23:59:59.000Z`, 'UTC', false, learningDays);
  input.now = '2026-11-11T02:00:00.000Z';
  return { input, judgement: judgeDay(input, flowConfig(registry, { checks: { volume: {} } })) };
}

describe('judgeDay while the flow is learning', () => {
  it('counts the earlier days with data, and stays silent on a drop until it has learnt enough of them', () => {
    const learning = judge(21, 28);
    expect(learning.input.learning).toEqual({ days: 20, needed: 28 });
    expect(learning.judgement.verdict).toBe('judged');
    expect(learning.judgement.reason).toBe('learning: 20 of 28 days');
    expect(learning.judgement.findings.filter((f) => f.check !== 'freshness')).toEqual([]);
  });

  it('judges as usual once the flow has data on learning_days earlier days', () => {
    const learnt = judge(29, 28);
    expect(learnt.input.learning).toBeUndefined();
    expect(learnt.judgement.reason).toBeUndefined();
    expect(learnt.judgement.findings.some((f) => f.check === 'volume' && f.direction === 'down')).toBe(true);
  });

  it('never asks for more days than the history window holds', () => {
    const input = sliceInput(history(40), END, 20, {}, `${END}T23:59:59.000Z`, 'UTC', false, 28);
    expect(input.learning).toBeUndefined();
  });
});

// Issue 13 item 6: an open incident stays open while its series stays outside its expected band.
describe('judgeDay on the series of open incidents (hysteresis)', () => {
  const judgeAt = (factor: number, open: string[]) => {
    const input = sliceInput(history(60, factor), END, HISTORY_DAYS, {}, `${END}T23:59:59.000Z`, 'UTC', false, 28);
    input.now = '2026-11-11T02:00:00.000Z';
    input.open = open;
    return judgeDay(input, flowConfig(registry, { checks: { volume: {} } }));
  };
  const key = `volume:people:${flow.events[0]}:${flow.platforms[0]}:*`;

  it('reports an open series 20% down, under the 30% drop threshold, as still outside its band, and no other series', () => {
    const judgement = judgeAt(0.8, [key]);
    expect(judgement.findings.filter((f) => f.check === 'volume')).toEqual([]);
    expect(judgement.outside.map((e) => [e.check, e.seriesKey, e.direction])).toEqual([['volume', key, 'down']]);
    expect(judgement.outside[0]!.observed).toBeLessThan(judgement.outside[0]!.expected.low);
    // Not open: nothing to say.
    expect(judgeAt(0.8, []).outside).toEqual([]);
  });

  it('leaves an open series back in its band, or one reported as a finding, out', () => {
    expect(judgeAt(0.95, [key]).outside).toEqual([]);
    const reported = judgeAt(0.2, [key]);
    expect(reported.findings.some((f) => f.seriesKey === key)).toBe(true);
    expect(reported.outside).toEqual([]);
  });
});
