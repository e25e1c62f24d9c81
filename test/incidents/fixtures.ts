/**
 * Hand-made incident drafts in the Metro Pass scenario, and a helper that
 * judges a (flow, day) the way the daily run does: store the verdict and
 * findings, then apply the drafts and queue what they announce, in one transaction.
 */
import type pg from 'pg';
import type { IncidentDraft } from '../../checks/causes/types.js';
import type { ExcerptPoint, Finding, Severity } from '../../checks/types.js';
import { addDays } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { announceChanges } from '../../service/delivery/announce.js';
import { applyIncidentDrafts, type DayHolds, type IncidentChanges } from '../../service/incidents/apply.js';
import type { IncidentPolicy } from '../../service/incidents/types.js';
import { storeJudgement } from '../../service/state/findings.js';

export const FLOW = 'monthly_pass';
export const OWNER = 'growth-analytics';
export const MENTION = '<!subteam^S0GROWTH>';

export const POLICY: IncidentPolicy = {
  resolveAfterDays: 2,
  repeatAfterSeconds: 86_400,
  publicUrl: 'http://plumbline.metropass.example/',
  owners: { [OWNER]: { chat_mention: MENTION, email: ['growth-analytics@metropass.example'] } },
  hideValues: false,
  chatFormat: 'slack',
};

/** The judged run's clock for a day: 08:30 UTC the next morning. */
export function clockFor(day: string, plusHours = 0): Date {
  return new Date(Date.parse(`${addDays(day, 1)}T08:30:00Z`) + plusHours * 3_600_000);
}

/** Normal level and expected band of the fixtures' series: people per day, or a conversion rate. */
function level(metric: string) {
  return metric === 'conversion' ? { normal: 0.62, wiggle: 0.02, low: 0.58, high: 0.66 } : { normal: 3000, wiggle: 150, low: 2800, high: 3300 };
}

export function excerptUntil(day: string, flaggedFrom: string, value = 0, metric = 'people'): ExcerptPoint[] {
  const { normal, wiggle, low, high } = level(metric);
  return Array.from({ length: 14 }, (_, i) => {
    const d = addDays(day, i - 13);
    const flagged = d >= flaggedFrom;
    return { day: d, value: flagged ? value : normal + wiggle * Math.sin(i), expectedLow: low, expectedHigh: high, ...(flagged ? { flagged: true } : {}) };
  });
}

export interface DraftOptions {
  day: string;
  since?: string;
  severity?: Severity;
  muted?: boolean;
  fingerprint?: string;
  subject?: string;
  event?: string;
  param?: string;
  title?: string;
  sentence?: string;
  message?: string;
  evidence?: Record<string, number | string | null>;
  platform?: string;
  version?: string;
  metric?: string;
  observed?: number;
}

export function finding(o: DraftOptions): Finding {
  const event = o.event ?? 'screen_shown';
  const since = o.since ?? o.day;
  return {
    check: o.param ? 'schema' : 'volume',
    kind: o.param ? 'new_value' : 'drop',
    flow: FLOW,
    subject: o.param ? { type: 'param', name: `${event}.${o.param}`, event, param: o.param } : { type: 'step', name: o.subject ?? 'rider', event, step: 'rider' },
    metric: o.metric ?? 'people',
    platform: o.platform ?? 'android',
    version: o.version ?? '7.4.0',
    day: o.day,
    since,
    observed: o.observed ?? 0,
    expected: { low: level(o.metric ?? 'people').low, high: level(o.metric ?? 'people').high, center: level(o.metric ?? 'people').normal },
    score: -9.5,
    direction: 'down',
    severity: o.severity ?? 'warn',
    message: o.message ?? `android 7.4.0 rider_details views fell to 0 since ${since}`,
    seriesKey: `${o.param ? `schema|${event}.${o.param}` : `volume|${event}|${o.subject ?? 'rider'}`}|${o.platform ?? 'android'}|${o.version ?? '7.4.0'}`,
    excerpt: excerptUntil(o.day, since, o.observed ?? 0, o.metric ?? 'people'),
    ...(o.muted ? { muted: 'android 7.4 rollout paused' } : {}),
  };
}

export function draft(o: DraftOptions): IncidentDraft {
  const platform = o.platform ?? 'android';
  const version = o.version ?? '7.4.0';
  const subject = o.param ? `${o.event ?? 'screen_shown'}.${o.param}` : (o.subject ?? 'rider');
  return {
    fingerprint: o.fingerprint ?? `${FLOW}|release|${subject}|${platform}|${version}`,
    flows: [FLOW],
    owners: [OWNER],
    day: o.day,
    since: o.since ?? o.day,
    severity: o.severity ?? 'warn',
    title: o.title ?? `${platform} ${version} stopped sending ${subject} views`,
    subject,
    platform,
    version,
    cause: {
      label: 'release',
      confidence: 0.82,
      sentence: o.sentence ?? `${platform} ${version} (first seen ${o.since ?? o.day}, 41% of ${platform} people) stopped sending rider_details views: 0 of 3,120 people vs 96% on 7.3.x`,
      platform,
      version,
      evidence: o.evidence ?? { first_seen: o.since ?? o.day, adoption_share: 0.41, people_on_version: 3120 },
    },
    symptoms: [finding(o)],
    muted: o.muted ?? false,
  };
}

/** The second flow of the scenario, for incidents that hold back several flows. */
export const SIGNUP = { flow: 'account_signup', owner: 'accounts' };

/** The pipeline stopped at 14:00 on `day`, as `flow`'s freshness check sees it: a data delay, whose fingerprint names no flow. */
export function delayDraft(day: string, flow = FLOW, owner = OWNER): IncidentDraft {
  const symptom: Finding = {
    ...finding({ day, platform: 'web', version: '' }),
    check: 'freshness',
    kind: 'partial_day',
    flow,
    subject: { type: 'day', name: day },
    metric: 'events',
    version: null,
    message: `events for ${day} from web stopped at 14:00 (about 50% of the day's events missing); ${day} not judged yet`,
    seriesKey: 'freshness:day:web',
  };
  return {
    fingerprint: '*|data_delay|events|*|*',
    flows: [flow],
    owners: [owner],
    day,
    since: day,
    severity: 'warn',
    title: `web: ${symptom.message}`,
    subject: 'events',
    platform: 'web',
    version: null,
    cause: { label: 'data_delay', confidence: 0.9, sentence: `the data is late or incomplete: ${symptom.message}`, platform: 'web', version: null, evidence: { stoppedAt: '14:00' } },
    symptoms: [symptom],
    muted: false,
  };
}

/** The arrival day's note that late rows restated `restatedDay` on android, as `freshness` reports it: a data delay. */
export function restatedDraft(day: string, restatedDay: string): IncidentDraft {
  const message = `late rows restated ${restatedDay} on android: 2,100 events at the first rollup, 3,000 now (+42.9%); the day was rolled up again`;
  const symptom: Finding = {
    ...finding({ day, version: '' }),
    check: 'freshness',
    kind: 'restated',
    subject: { type: 'day', name: restatedDay },
    metric: 'events',
    version: null,
    severity: 'note',
    direction: 'up',
    message,
    seriesKey: `freshness:restated:android:${restatedDay}`,
    evidence: { restatedDay, before: 2100, after: 3000, change: 0.429, rolledUpAt: `${day}T08:00:00Z` },
  };
  return {
    fingerprint: '*|data_delay|events|*|*',
    flows: [FLOW],
    owners: [OWNER],
    day,
    since: day,
    severity: 'note',
    title: `android: ${message}`,
    subject: 'events',
    platform: 'android',
    version: null,
    cause: { label: 'data_delay', confidence: 0.9, sentence: `the data is late or incomplete: ${message}`, platform: 'android', version: null, evidence: { check: 'freshness', kind: 'restated' } },
    symptoms: [symptom],
    muted: false,
  };
}

/** Judges (FLOW, day) as the daily run does, in one transaction. */
export async function judge(
  pool: pg.Pool,
  schema: string,
  day: string,
  drafts: IncidentDraft[],
  options: { verdict?: 'judged' | 'not_ready'; now?: Date; policy?: IncidentPolicy; lateRows?: boolean; holds?: DayHolds } = {},
): Promise<IncidentChanges> {
  return await judgeFlows(pool, schema, day, [{ flow: FLOW, drafts, verdict: options.verdict ?? 'judged' }], options);
}

/** Judges every given flow on `day` as the daily run does: their verdicts and findings, then every draft, in one transaction. */
export async function judgeFlows(
  pool: pg.Pool,
  schema: string,
  day: string,
  flows: Array<{ flow: string; drafts: IncidentDraft[]; verdict?: 'judged' | 'not_ready' }>,
  options: { now?: Date; policy?: IncidentPolicy; lateRows?: boolean; holds?: DayHolds } = {},
): Promise<IncidentChanges> {
  const client = await pool.connect();
  try {
    await client.query('begin');
    for (const { flow, drafts, verdict } of flows) {
      await storeJudgement(client, schema, flow, day, verdict ?? 'judged', undefined, drafts.flatMap((d) => d.symptoms));
    }
    const drafts = flows.flatMap((f) => f.drafts);
    const policy = options.policy ?? POLICY;
    const now = options.now ?? clockFor(day);
    const changes = await applyIncidentDrafts(client, schema, flows.map((f) => f.flow), day, drafts, policy, now, {
      lateRows: options.lateRows ?? false,
      ...(options.holds ? { holds: options.holds } : {}),
    });
    await announceChanges(client, schema, changes, policy, now);
    await client.query('commit');
    return changes;
  } catch (error) {
    await client.query('rollback');
    throw error;
  } finally {
    client.release();
  }
}

export interface OutboxRow {
  id: number;
  incident_id: string;
  event: string;
  day: string;
  idempotency_key: string;
  payload: { text: string; blocks: unknown[] };
  state: string;
}

export async function outboxRows(pool: pg.Pool, schema: string): Promise<OutboxRow[]> {
  const { rows } = await pool.query<OutboxRow>(
    `select id::int, incident_id, event, to_char(day, 'YYYY-MM-DD') as day, idempotency_key, payload, state from ${quoteIdent(schema)}.outbox order by id`,
  );
  return rows;
}
