/**
 * A Metro Pass state for the page tests, built through the real code paths:
 * the example config (two flows), a migrated state schema, verdicts and
 * findings stored with `storeJudgement`, incidents opened, continued and
 * resolved with `applyIncidentDrafts` (their chat messages queued with
 * `announceChanges`), one message parked by the sender's own functions. Only the
 * rollup rows behind the per-version split and two `runs` rows are written
 * directly. Every cause label appears once, and one event name is hostile.
 */
import type { Cause, IncidentDraft } from '../../checks/causes/types.js';
import type { Finding, Severity } from '../../checks/types.js';
import { daysBetween } from '../../service/config/definitions.js';
import { quoteIdent } from '../../service/db/sql.js';
import { claimNext, markFailed } from '../../service/delivery/outbox.js';
import { announceChanges } from '../../service/delivery/announce.js';
import type { ServeStatus } from '../../service/http/app.js';
import { applyIncidentDrafts, incidentPolicy } from '../../service/incidents/apply.js';
import type { Runtime } from '../../service/runtime.js';
import { storeJudgement } from '../../service/state/findings.js';
import { HOSTILE } from '../delivery/hostile.js';
import { clockFor, excerptUntil } from '../incidents/fixtures.js';
import { createRunnerFixture, type RunnerFixture } from '../runner/fixture.js';

export const DAYS = daysBetween('2026-03-02', '2026-03-06');
export const HOSTILE_EVENT = HOSTILE.html!;
/** A parameter value that must never reach a page: its key has no low-cardinality profile. */
export const SECRET_VALUE = 'Z9-private-zone';
export const PARKED_ERROR = `chat webhook answered 404 ${HOSTILE.html!}`;
export const FAILED_RUN_ERROR = `rollup failed near ${HOSTILE.attribute!}`;

interface DraftSpec {
  key: string;
  flow: 'monthly_pass' | 'account_signup';
  days: string[];
  since: string;
  severity: Severity;
  cause: Cause;
  subject: Finding['subject'];
  metric: 'people' | 'conversion';
  platform: string | null;
  version: string | null;
  title: string;
  message: string;
  check?: string;
  kind?: string;
  muted?: boolean;
}

const OWNERS = { monthly_pass: 'growth-analytics', account_signup: 'accounts' } as const;

const cause = (label: Cause['label'], sentence: string, platform: string | null, version: string | null, evidence: Cause['evidence'], extra: Partial<Cause> = {}): Cause => ({
  label,
  confidence: 0.8,
  sentence,
  platform,
  version,
  evidence,
  ...extra,
});

/** The incidents of the scenario, by key. */
export const SPECS: DraftSpec[] = [
  {
    key: 'release',
    flow: 'monthly_pass',
    days: ['2026-03-04', '2026-03-05', '2026-03-06'],
    since: '2026-03-04',
    severity: 'page',
    cause: cause(
      'release',
      'android 7.4.0 (first seen 2026-03-03, 41% of android people) lost the rider step: 25% of people at zone reach rider vs 78% on other versions',
      'android',
      '7.4.0',
      { version: '7.4.0', firstSeen: '2026-03-03', adoption: 0.41, versionRate: 0.25, restRate: 0.78 },
    ),
    subject: { type: 'step', name: 'rider', event: 'screen_shown', step: 'rider' },
    metric: 'conversion',
    platform: 'android',
    version: null,
    title: 'android zone -> rider conversion fell after release 7.4.0',
    message: 'android zone -> rider conversion 40.5% vs 58% to 66% expected',
  },
  {
    key: 'hostile',
    flow: 'monthly_pass',
    days: ['2026-03-06'],
    since: '2026-03-05',
    severity: 'warn',
    cause: cause('behaviour', `people sending ${HOSTILE_EVENT} fell on every platform`, null, null, { share_change: -0.3 }),
    subject: { type: 'event', name: HOSTILE_EVENT, event: HOSTILE_EVENT },
    metric: 'people',
    platform: 'web',
    version: null,
    title: `web ${HOSTILE_EVENT} people fell`,
    message: `web ${HOSTILE_EVENT} people fell to 0 since 2026-03-05`,
  },
  {
    key: 'hidden',
    flow: 'monthly_pass',
    days: ['2026-03-06'],
    since: '2026-03-06',
    severity: 'warn',
    cause: cause('release', `ios 5.2.0 sends fare_zone ${SECRET_VALUE}`, 'ios', '5.2.0', { version: '5.2.0', value: SECRET_VALUE, adoption: 0.2 }),
    subject: { type: 'param', name: 'zone_selected.fare_zone', event: 'zone_selected', param: 'fare_zone' },
    metric: 'people',
    platform: 'ios',
    version: '5.2.0',
    check: 'schema',
    kind: 'new_value',
    title: `ios 5.2.0 sends fare_zone ${SECRET_VALUE}`,
    message: `ios 5.2.0 sends fare_zone value ${SECRET_VALUE}, not in the declared enum`,
  },
  {
    key: 'platform',
    flow: 'account_signup',
    days: ['2026-03-05', '2026-03-06'],
    since: '2026-03-05',
    severity: 'warn',
    cause: cause('platform', 'ios form -> submitted conversion diverged from web and android; no single version explains it', 'ios', null, { platform_rate: 0.31, others_rate: 0.55 }),
    subject: { type: 'step', name: 'submitted', event: 'signup_submitted', step: 'submitted' },
    metric: 'conversion',
    platform: 'ios',
    version: null,
    title: 'ios form -> submitted conversion fell',
    message: 'ios form -> submitted conversion 31% vs 52% to 58% expected',
  },
  {
    key: 'calendar',
    flow: 'account_signup',
    days: ['2026-03-02'],
    since: '2026-03-02',
    severity: 'note',
    cause: cause('calendar', 'the day is declared low: spring break', null, null, { note: 'spring break' }),
    subject: { type: 'step', name: 'form', event: 'screen_shown', step: 'form' },
    metric: 'people',
    platform: 'web',
    version: null,
    title: 'web signup form views were low on a declared holiday',
    message: 'web form people 1,900 vs 2,800 to 3,300 expected',
  },
  {
    key: 'segment',
    flow: 'account_signup',
    days: ['2026-03-06'],
    since: '2026-03-06',
    severity: 'warn',
    cause: cause('segment', 'the drop sits in channel partner', 'android', null, { channel_share: 0.7 }, { segment: { dimension: 'channel', value: 'partner', explanatoryPower: 0.82, surprise: 1.7 } }),
    subject: { type: 'step', name: 'verified', event: 'email_verified', step: 'verified' },
    metric: 'people',
    platform: 'android',
    version: null,
    title: 'android verified people fell in channel partner',
    message: 'android verified people 900 vs 2,800 to 3,300 expected',
  },
  {
    key: 'delay',
    flow: 'account_signup',
    days: ['2026-03-06'],
    since: '2026-03-06',
    severity: 'warn',
    cause: cause('data_delay', 'events of 2026-03-06 stopped at 14:00 on every platform', null, null, { newest_hour: 14 }),
    subject: { type: 'event', name: 'signup_submitted', event: 'signup_submitted' },
    metric: 'people',
    platform: null,
    version: null,
    title: 'signup_submitted stopped arriving at 14:00',
    message: 'signup_submitted people 1,200 vs 2,800 to 3,300 expected',
    muted: true,
  },
];

function symptom(spec: DraftSpec, day: string): Finding {
  const observed = spec.metric === 'conversion' ? 0.405 : 0;
  const excerpt = excerptUntil(day, spec.since, observed, spec.metric);
  const expected = spec.metric === 'conversion' ? { low: 0.58, high: 0.66, center: 0.62 } : { low: 2800, high: 3300, center: 3000 };
  return {
    check: spec.check ?? (spec.metric === 'conversion' ? 'conversion' : 'volume'),
    kind: spec.kind ?? 'drop',
    flow: spec.flow,
    subject: spec.subject,
    metric: spec.metric,
    platform: spec.platform,
    version: spec.version,
    day,
    since: spec.since,
    observed,
    expected,
    score: -8.5,
    direction: 'down',
    severity: spec.severity,
    message: spec.message,
    seriesKey: `${spec.key}|${spec.subject.name}|${spec.platform ?? '*'}|${spec.version ?? '*'}`,
    excerpt,
    ...(spec.muted ? { muted: 'collector maintenance announced' } : {}),
  };
}

const fingerprintOf = (spec: DraftSpec) => `${spec.flow}|${spec.cause.label}|${spec.subject.name}|${spec.platform}|${spec.version}`;

function draftOf(spec: DraftSpec, day: string): IncidentDraft {
  return {
    fingerprint: fingerprintOf(spec),
    flows: [spec.flow],
    owners: [OWNERS[spec.flow]],
    day,
    since: spec.since,
    severity: spec.severity,
    title: spec.title,
    subject: spec.subject.name,
    platform: spec.platform,
    version: spec.version,
    cause: spec.cause,
    symptoms: [symptom(spec, day)],
    muted: spec.muted ?? false,
  };
}

/** android people at zone (step 1) and rider (step 2) per version on the release incident's days: 7.4.0 loses the rider step. */
const FUNNEL: Array<{ version: string; zone: number; rider: number }> = [
  { version: '7.3.2', zone: 1000, rider: 780 },
  { version: '7.4.0', zone: 600, rider: 150 },
  { version: '*', zone: 1600, rider: 930 },
];

export interface PagesScenario {
  fixture: RunnerFixture;
  rt: Runtime;
  status: ServeStatus;
  /** Incident id by spec key. */
  ids: Record<string, string>;
  drop(): Promise<void>;
}

export async function createPagesScenario(): Promise<PagesScenario> {
  const fixture = await createRunnerFixture({ days: ['2026-03-06'], catchUpDays: 1 });
  const rt = await fixture.open();
  const schema = rt.stateSchema;
  const policy = { ...incidentPolicy(rt.config.main), resolveAfterDays: 2 };
  for (const flow of ['monthly_pass', 'account_signup'] as const) {
    for (const day of DAYS) {
      const drafts = SPECS.filter((spec) => spec.flow === flow && spec.days.includes(day)).map((spec) => draftOf(spec, day));
      const client = await rt.state.connect();
      try {
        await client.query('begin');
        await storeJudgement(client, schema, flow, day, 'judged', undefined, drafts.flatMap((d) => d.symptoms));
        const changes = await applyIncidentDrafts(client, schema, [flow], day, drafts, policy, clockFor(day));
        await announceChanges(client, schema, changes, policy, clockFor(day));
        await client.query('commit');
      } catch (error) {
        await client.query('rollback');
        throw error;
      } finally {
        client.release();
      }
    }
  }

  const s = quoteIdent(schema);
  const ids: Record<string, string> = {};
  const { rows: incidents } = await rt.state.query<{ id: string; fingerprint: string }>(`select id, fingerprint from ${s}.incidents`);
  for (const spec of SPECS) ids[spec.key] = incidents.find((i) => i.fingerprint === fingerprintOf(spec))!.id;
  for (const day of SPECS[0]!.days) {
    for (const row of FUNNEL) {
      for (const [step, reached] of [[1, row.zone], [2, row.rider]] as const) {
        await rt.state.query({
          text: `insert into ${s}.funnel_days (day, flow, platform, version, dimension, value, step, entered, reached, timed) values ($1, 'monthly_pass', 'android', $2, '', '', $3, 0, $4, 0)`,
          values: [day, row.version, step, reached],
        });
      }
    }
  }
  await rt.state.query({
    text: `insert into ${s}.runs (kind, day, flow, status, runner, started_at, finished_at, error) values
      ('rollup', '2026-03-06', null, 'done', 'test', '2026-03-07T08:30:00Z', '2026-03-07T08:30:04.2Z', null),
      ('judge', '2026-03-06', 'monthly_pass', 'failed', 'test', '2026-03-07T08:30:05Z', '2026-03-07T08:30:05.3Z', $1)`,
    values: [FAILED_RUN_ERROR],
  });
  // A rolled-up day with rows set aside and repaired, and a row limit reached.
  await rt.state.query({
    text: `insert into ${s}.day_status (day, platform, events, newest_at, hourly, rolled_up_at, bad_rows, over_limits)
      values ('2026-03-06', 'ios', 9120, null, '{}', now(), '{"no_event_name": 31, "reserved_version": 4}', '{"versions": {"seen": 812, "kept": 500}}')
      on conflict (day, platform) do update set bad_rows = excluded.bad_rows, over_limits = excluded.over_limits, events = excluded.events`,
    values: [],
  });
  const now = clockFor('2026-03-06', 1);
  const claimed = await claimNext(rt.state, schema, now, 60_000, 'pages-test');
  if (!claimed) throw new Error('the scenario should have queued chat messages');
  await markFailed(rt.state, schema, claimed.id, PARKED_ERROR, { parkedAt: now });

  return {
    fixture,
    rt,
    status: { demo: false, startupDone: () => true, maxPassAgeSeconds: null },
    ids,
    drop: () => fixture.drop(),
  };
}
