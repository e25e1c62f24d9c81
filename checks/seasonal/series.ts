/**
 * The daily series the `seasonal` check judges for one platform, built from
 * the platform totals (version '*', no dimension breakdown):
 * - people per watched event (EventDayRow) and per step (StepDayRow);
 * - step-to-step and end-to-end conversion (FunnelDayRow, `funnel-rates.ts`);
 * - median time from the previous step (FunnelDayRow.secondsMedian).
 *
 * Missing days: a count follows `countSeries` in checks/series.ts (0 once the
 * series exists, on days the platform sent anything; unknown otherwise). A rate is unknown on a day nobody reached its denominator
 * step, a median time on a day with no timed step.
 */
import { conversionSettled, funnelTotals, rateSeries, transitions } from '../funnel.js';
import { platformTotals } from '../rows.js';
import { countSeries, dailySeries, eventRows, platformDays, stepRows } from '../series.js';
import type { CheckInput, Finding } from '../types.js';

export type SeriesKind = 'count' | 'rate' | 'seconds';

export interface JudgedSeries {
  seriesKey: string;
  kind: SeriesKind;
  metric: string;
  subject: Finding['subject'];
  /** What the value is, for messages: `screen_shown people`, `zone -> rider conversion`. */
  label: string;
  values: Float64Array;
  /** People behind each value: the count itself, the rate's denominator, the timed people. */
  support: Float64Array;
}

/** Every series judged for `platform`; funnel series only once the day's conversion window has passed. */
export function seriesFor(input: CheckInput, platform: string): JudgedSeries[] {
  const flow = input.flow;
  const days = input.days;
  const sending = platformDays(input, platform);
  const out: JudgedSeries[] = [];

  for (const event of flow.events) {
    const values = countSeries(input, eventRows(input, event, platform), sending).people;
    out.push({
      seriesKey: `seasonal:people:${event}:${platform}:*`,
      kind: 'count',
      metric: 'people',
      subject: { type: 'event', name: event, event },
      label: `${event} people`,
      values,
      support: values,
    });
  }
  flow.steps.forEach((step, index) => {
    const values = countSeries(input, stepRows(input, index, platform), sending).people;
    out.push({
      seriesKey: `seasonal:step_people:${step.name}:${platform}:*`,
      kind: 'count',
      metric: 'step_people',
      subject: { type: 'step', name: step.name, step: step.name, event: step.event },
      label: `${step.name} step people`,
      values,
      support: values,
    });
  });

  if (!conversionSettled(input)) return out;
  const funnel = funnelTotals(input, [platform]);
  for (const transition of transitions(flow)) {
    const { successes, trials } = rateSeries(input, funnel, transition);
    const target = flow.steps[transition.to]!;
    out.push({
      seriesKey: `seasonal:conversion:${transition.key}:${platform}:*`,
      kind: 'rate',
      metric: transition.endToEnd ? 'end_to_end_conversion' : 'conversion',
      subject: transition.endToEnd ? { type: 'flow', name: flow.id } : { type: 'step', name: target.name, step: target.name, event: target.event },
      label: `${transition.label} conversion`,
      values: successes.map((x, i) => (trials[i]! > 0 ? x / trials[i]! : Number.NaN)),
      support: trials,
    });
  }
  const timing = platformTotals(input).funnel.filter((row) => row.platform === platform);
  flow.steps.forEach((step, index) => {
    if (index === 0) return;
    const rows = timing.filter((row) => row.step === index && row.secondsMedian !== null);

    out.push({
      seriesKey: `seasonal:step_seconds:${step.name}:${platform}:*`,
      kind: 'seconds',
      metric: 'step_seconds_median',
      subject: { type: 'step', name: step.name, step: step.name, event: step.event },
      label: `${flow.steps[index - 1]!.name} -> ${step.name} median time`,
      values: dailySeries(days, rows, (row) => Number(row.secondsMedian)),
      support: dailySeries(days, rows, (row) => Number(row.timed)),
    });
  });
  return out;
}
