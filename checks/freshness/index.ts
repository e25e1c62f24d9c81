/**
 * `freshness`: is the judged day's data complete, did late rows restate days
 * already judged, and did the pipeline load rows twice?
 *
 * - `no_events`, `partial_day`, `slow_day_end` (see hours.ts): the day is
 *   incomplete on a platform. The gate then holds the day back (`not_ready`),
 *   so no other check judges a half-loaded day, and it is judged again later.
 *   Score: the share of the day's projected events that is missing (0 to 1).
 * - `restated` (see restated.ts): a past day's event count changed at a
 *   later rollup. Score: the relative change of that day's events (1 when
 *   it had none at its first rollup).
 * - `duplicates` (see duplicates.ts): events per person rose together on most
 *   watched events of a platform. Score: the median factor minus 1 (1 = doubled).
 * - `bad_rows` (see bad-rows.ts): more than `max_bad_row_share` of a platform's
 *   rows of the day could not be used as sent (set aside or repaired, per
 *   reason in the day status). Score: that share. The day is still judged:
 *   the rows that could be used are complete.
 * - `row_limits`: the day reached a row limit on a platform (more distinct
 *   event names, versions, dimension values or parameter keys than
 *   `warehouse.limits` keeps; the day status says how many). Score: the
 *   largest ratio of values seen to values kept.
 *
 * Calendar days: the note is attached, but the severity is not lowered, since
 * a holiday or campaign changes how many events come, not the shape of the
 * day's hours, a restatement or rows loaded twice.
 *
 * The check's clock: a day is not over before `dayEnd(day)`; until then the
 * gate says not ready without a finding. Lag is measured from the newest
 * event to the day's end, not to the clock, so a live run (shortly after
 * midnight plus the settle time) and a replay weeks later judge alike.
 */
import { z } from 'zod';
import { formatCount, formatNumber, formatPercent, renderMessage } from '../messages.js';
import { duration, optionsFor, percent, severity } from '../options.js';
import { baselineExclusions, dailySeries, excerpt, runStart } from '../series.js';
import { dayEnd, dayStart } from '../time.js';
import type { CheckInput, CheckModule, DayStatusRow, ExcerptPoint, Finding, Readiness, Severity, WithPlatforms } from '../types.js';
import { badRowShare, badRowShares, type BadRowShare } from './bad-rows.js';
import { duplicateJudgement, mostJumped } from './duplicates.js';
import { completeness, hourlyProfile, type Completeness } from './hours.js';
import { restatements, type Restatement } from './restated.js';

export const options = z.strictObject({
  max_lag: duration()
    .default(3 * 3600)
    .describe("How long before the day's end the newest event may be; the last max(max_lag, 3h) are also checked for a thin trickle."),
  min_tail_share: percent()
    .default(0.4)
    .describe('The last max(max_lag, 3h) of the day must hold at least this share of the events its earlier hours predict for them.'),
  min_missing_events: z
    .number()
    .int()
    .min(1)
    .default(20)
    .describe("A stop or a thin end must miss at least this many of the platform's usual events: quiet nights of small platforms are not a stop."),
  severity: severity('warn').describe('Severity of an incomplete day (the day waits for its data either way).'),
  min_restated_change: percent().default(0.01).describe('A restated past day is reported when its event count moved by at least this share.'),
  restated_severity: severity('note').describe('Severity of a restated past day.'),
  duplicates_rise: percent()
    .default(0.5)
    .describe('Rows loaded twice: events per person up by more than this share on most watched events of a platform at once.'),
  min_people: z.number().int().min(1).default(50).describe('Events with fewer people than this on the day take no part in the duplicate test.'),
  duplicates_severity: severity('warn').describe('Severity of rows loaded twice.'),
  max_bad_row_share: percent()
    .default(0.01)
    .describe("Rows plumbline could not use as sent (no event name, a reserved version, text cut to length, unreadable parameters) may be at most this share of a platform's rows of the day."),
  min_bad_rows: z.number().int().min(1).default(20).describe('Fewer bad rows than this on a platform and day are never reported, whatever their share.'),
  bad_rows_severity: severity('warn').describe('Severity of a day with too many bad rows.'),
  row_limits_severity: severity('note').describe('Severity of a day that reached a row limit (warehouse.limits): more distinct values than plumbline keeps.'),
});
type Options = z.output<typeof options>;

const messages = {
  no_events: 'no events at all from {platform} for {day}, where about {expected} are usual; {day} not judged yet',
  partial_day: "events for {day} from {platform} stopped at {stopped} (about {missing} of the day's events missing); {day} not judged yet",
  slow_day_end: 'events for {day} from {platform} thinned out in the last {hours} h: {observed} where about {due} were due; {day} not judged yet',
  restated: 'late rows restated {restatedDay} on {platform}: {before} events at the first rollup, {after} now ({change}); the day was rolled up again',
  duplicates:
    '{platform} sent {factor} times the usual events per person on {jumped} of {judged} watched events on {day} ({events}): rows loaded twice?',
  row_limits: '{platform} sent more distinct values on {day} than plumbline keeps ({limits}): those with the fewest events were left out of the rollup',
  bad_rows: '{share} of the rows from {platform} on {day} could not be used as sent ({rows} of {total}: {reasons}); the day was judged on the rest',
};

/** Days shown with a finding. */
const EXCERPT_DAYS = 28;

function calendarOf(input: CheckInput): { calendar?: string } {
  const entry = input.calendar.find((day) => day.day === input.day);
  return entry ? { calendar: entry.note } : {};
}

function since(input: CheckInput, seriesKey: string): string {
  return runStart(input.days, new Set([...(input.anomalous[seriesKey] ?? []), input.day])) ?? input.day;
}

/** The platform's daily events (from the day status) for excerpts. */
function dailyEvents(input: CheckInput, platform: string): Float64Array {
  return dailySeries(
    input.days,
    input.status.filter((row) => row.platform === platform),
    (row) => row.events,
  );
}

function base(input: CheckInput, kind: keyof typeof messages, platform: string, seriesKey: string, values: Record<string, string | number>) {
  return {
    check: 'freshness',
    kind,
    flow: input.flow.id,
    platform,
    version: null,
    day: input.day,
    since: since(input, seriesKey),
    seriesKey,
    message: renderMessage(messages[kind], { platform, day: input.day, ...values }),
    ...calendarOf(input),
  };
}

function incompleteFinding(input: CheckInput, gap: Completeness, level: Severity): Finding {
  const seriesKey = `freshness:day:${gap.platform}`;
  const values = dailyEvents(input, gap.platform);
  return {
    ...base(input, gap.kind, gap.platform, seriesKey, {
      expected: formatCount(gap.expectedDay),
      missing: formatPercent(gap.missing / gap.expectedDay, 0),
      stopped: gap.stoppedAt ?? '-',
      hours: gap.tailHours,
      observed: formatCount(gap.tailEvents ?? 0),
      due: formatCount(gap.tailExpected ?? 0),
    }),
    subject: { type: 'day', name: input.day },
    metric: 'events',
    observed: gap.events,
    expected: { low: gap.expectedDay - gap.missing, high: gap.expectedDay, center: gap.expectedDay },
    score: gap.missing / gap.expectedDay,
    direction: 'down',
    severity: level,
    excerpt: excerpt(input.days, values, EXCERPT_DAYS, undefined, new Set([input.day])),
    evidence: {
      events: gap.events,
      expectedDay: gap.expectedDay,
      missing: gap.missing,
      stoppedAt: gap.stoppedAt,
      lagSeconds: gap.lagSeconds,
      tailHours: gap.tailHours,
      tailEvents: gap.tailEvents,
      tailExpected: gap.tailExpected,
      profileDays: gap.profileDays,
    },
  };
}

function restatedFinding(input: CheckInput, platform: string, r: Restatement, level: Severity): Finding {
  const seriesKey = `freshness:restated:${platform}:${r.row.day}`;
  const sign = r.change >= 0 ? '+' : '';
  return {
    ...base(input, 'restated', platform, seriesKey, {
      restatedDay: r.row.day,
      before: formatCount(r.before),
      after: formatCount(r.row.events),
      change: Number.isFinite(r.change) ? `${sign}${formatPercent(r.change, 1)}` : 'from none',
    }),
    subject: { type: 'day', name: r.row.day },
    metric: 'events',
    observed: r.row.events,
    expected: { low: r.before, high: r.before, center: r.before },
    score: Number.isFinite(r.change) ? r.change : 1,
    direction: r.row.events > r.before ? 'up' : 'down',
    severity: level,
    excerpt: excerpt(input.days, dailyEvents(input, platform), EXCERPT_DAYS, undefined, new Set([r.row.day])),
    evidence: { restatedDay: r.row.day, before: r.before, after: r.row.events, change: Number.isFinite(r.change) ? r.change : null, rolledUpAt: r.row.rolledUpAt },
  };
}

function duplicatesFinding(input: CheckInput, platform: string, o: Options): Finding | undefined {
  const seriesKey = `freshness:duplicates:${platform}`;
  const judgement = duplicateJudgement(input, platform, o.min_people, o.duplicates_rise, seriesKey);
  if (!mostJumped(judgement)) return undefined;
  const last = input.days.length - 1;
  const factor = judgement.medianFactors[last]!;
  const low = new Float64Array(input.days.length).fill(1 / (1 + o.duplicates_rise));
  const high = new Float64Array(input.days.length).fill(1 + o.duplicates_rise);
  const flagged = new Set([...(input.anomalous[seriesKey] ?? []), input.day]);
  const points: ExcerptPoint[] = excerpt(input.days, judgement.medianFactors, EXCERPT_DAYS, { low, high }, flagged);
  return {
    ...base(input, 'duplicates', platform, seriesKey, {
      factor: formatNumber(factor),
      jumped: judgement.jumped.length,
      judged: judgement.judged.length,
      events: judgement.jumped.map((jump) => jump.event).join(', '),
    }),
    subject: { type: 'day', name: input.day },
    metric: 'events_per_person',
    observed: factor,
    expected: { low: 1 / (1 + o.duplicates_rise), high: 1 + o.duplicates_rise, center: 1 },
    score: factor - 1,
    direction: 'up',
    severity: o.duplicates_severity,
    excerpt: points,
    evidence: {
      medianFactor: factor,
      jumpedEvents: judgement.jumped.map((jump) => `${jump.event} x${formatNumber(jump.factors[last]!)}`).join(', '),
      judgedEvents: judgement.judged.length,
    },
  };
}

function badRowsFinding(input: CheckInput, platform: string, bad: BadRowShare, o: Options): Finding {
  const seriesKey = `freshness:bad_rows:${platform}`;
  const shares = badRowShares(input, platform);
  const flagged = new Set([...(input.anomalous[seriesKey] ?? []), input.day]);
  return {
    ...base(input, 'bad_rows', platform, seriesKey, {
      share: formatPercent(bad.share, 1),
      rows: formatCount(bad.bad),
      total: formatCount(bad.rows),
      reasons: Object.entries(bad.reasons)
        .map(([reason, count]) => `${formatCount(count)} ${reason.replaceAll('_', ' ')}`)
        .join(', '),
    }),
    subject: { type: 'day', name: input.day },
    metric: 'bad_row_share',
    observed: bad.share,
    expected: { low: 0, high: o.max_bad_row_share, center: 0 },
    score: bad.share,
    direction: 'up',
    severity: o.bad_rows_severity,
    excerpt: excerpt(input.days, shares, EXCERPT_DAYS, undefined, flagged),
    evidence: { badRows: bad.bad, rows: bad.rows, share: bad.share, ...bad.reasons },
  };
}

const LIMIT_WORDS: Record<string, string> = { event_names: 'event names', versions: 'versions', dimension_values: 'values of a dimension', param_keys: 'parameter keys of an event' };

function rowLimitsFinding(input: CheckInput, row: DayStatusRow, reached: Array<[string, { seen: number; kept: number }]>, level: Severity): Finding {
  const ratio = Math.max(...reached.map(([, r]) => r.seen / r.kept));
  return {
    ...base(input, 'row_limits', row.platform, `freshness:row_limits:${row.platform}`, {
      limits: reached.map(([limit, r]) => `${formatCount(r.seen)} ${LIMIT_WORDS[limit] ?? limit}, ${formatCount(r.kept)} kept`).join('; '),
    }),
    subject: { type: 'day', name: input.day },
    metric: 'distinct_values',
    observed: ratio,
    expected: { low: 0, high: 1, center: 1 },
    score: ratio,
    direction: 'up',
    severity: level,
    excerpt: excerpt(input.days, dailyEvents(input, row.platform), EXCERPT_DAYS, undefined, new Set([input.day])),
    evidence: Object.fromEntries(reached.flatMap(([limit, r]) => [[`${limit}Seen`, r.seen], [`${limit}Kept`, r.kept]])),
  };
}

/** Incomplete platforms of the judged day, with their options. */
function gaps(input: CheckInput, all: WithPlatforms<Options>): Array<{ gap: Completeness; o: Options }> {
  const found: Array<{ gap: Completeness; o: Options }> = [];
  const bounds = { start: dayStart(input.day, input.timezone).getTime(), end: dayEnd(input.day, input.timezone).getTime() };
  for (const platform of input.flow.platforms) {
    const o = optionsFor(all, platform);
    const seriesKey = `freshness:day:${platform}`;
    const profile = hourlyProfile(input, platform, baselineExclusions(seriesKey, input.anomalous, input.calendar));
    if (!profile) continue;
    const row = input.status.find((r) => r.day === input.day && r.platform === platform);
    const gap = completeness(input, platform, row, profile, bounds, {
      maxLagSeconds: o.max_lag,
      minTailShare: o.min_tail_share,
      minMissingEvents: o.min_missing_events,
    });
    if (gap) found.push({ gap, o });
  }
  return found;
}

function notOver(input: CheckInput): boolean {
  return Date.parse(input.now) < dayEnd(input.day, input.timezone).getTime();
}

function gate(input: CheckInput, all: WithPlatforms<Options>): Readiness {
  if (notOver(input)) return { ready: false, reason: `${input.day} is not over yet (clock ${input.now})` };
  const found = gaps(input, all);
  if (found.length === 0) return { ready: true };
  const parts = found.map(({ gap }) =>
    gap.kind === 'partial_day' ? `stopped at ${gap.stoppedAt} on ${gap.platform}` : gap.kind === 'no_events' ? `none from ${gap.platform}` : `thinned out at the end on ${gap.platform}`,
  );
  return { ready: false, reason: `events for ${input.day}: ${parts.join(', ')}; ${input.day} not judged yet` };
}

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const findings: Finding[] = [];
  if (!notOver(input)) for (const { gap, o } of gaps(input, all)) findings.push(incompleteFinding(input, gap, o.severity));
  for (const platform of input.flow.platforms) {
    const o = optionsFor(all, platform);
    for (const r of restatements(input, platform, o.min_restated_change)) findings.push(restatedFinding(input, platform, r, o.restated_severity));
    const duplicates = duplicatesFinding(input, platform, o);
    if (duplicates) findings.push(duplicates);
    const bad = badRowShare(input.status.find((row) => row.day === input.day && row.platform === platform));
    if (bad && bad.bad >= o.min_bad_rows && bad.share > o.max_bad_row_share) findings.push(badRowsFinding(input, platform, bad, o));
    const today = input.status.find((row) => row.day === input.day && row.platform === platform);
    const reached = Object.entries(today?.overLimits ?? {});
    if (today && reached.length > 0) findings.push(rowLimitsFinding(input, today, reached, o.row_limits_severity));
  }
  return findings;
}

export const freshnessCheck: CheckModule<typeof options> = {
  id: 'freshness',
  description:
    "Holds a day back while its events are incomplete, and reports late rows that restate past days, rows the pipeline loaded twice and days with many rows plumbline could not use.",
  options,
  messages,
  run,
  gate,
};
