/**
 * The incident lifecycle against a real PostgreSQL, on hand-made drafts:
 * one incident per fingerprint episode, one message when it opens and one
 * when it resolves, a severity rise announced once, not sooner than repeat_after, resolution
 * after N clean judged days (not_ready days are not clean), muted incidents
 * and notes recorded but never announced, one incident and one message for a
 * data delay every flow saw, and reruns of a day that change nothing.
 */
import { afterEach, beforeEach, describe, expect, it, onTestFailed } from 'vitest';
import type { IncidentDraft } from '../../checks/causes/types.js';
import { daysBetween } from '../../service/config/definitions.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import type { DayHolds } from '../../service/incidents/apply.js';
import { listIncidents, loadIncident } from '../../service/incidents/store.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { FLOW, MENTION, OWNER, POLICY, SIGNUP, clockFor, delayDraft, draft, judge, judgeFlows, outboxRows, restatedDraft } from './fixtures.js';

let db: TestSchema;
/** What each test fed in, printed when it fails. */
let applied: Array<{ day: string; verdict: string; drafts: Array<Pick<IncidentDraft, 'fingerprint' | 'severity' | 'muted'>> }>;

beforeEach(async () => {
  db = await createTestSchema('inc');
  await migrate(db.pool, db.schema);
  applied = [];
  onTestFailed(() => console.log('applied (flow, day) judgements:', JSON.stringify(applied, null, 1)));
});
afterEach(async () => {
  await db.drop();
});

async function day(d: string, drafts: IncidentDraft[], options: { verdict?: 'judged' | 'not_ready'; now?: Date; lateRows?: boolean; holds?: DayHolds } = {}) {
  applied.push({ day: d, verdict: options.verdict ?? 'judged', drafts: drafts.map(({ fingerprint, severity, muted }) => ({ fingerprint, severity, muted })) });
  return await judge(db.pool, db.schema, d, drafts, options);
}

async function incidents() {
  return await listIncidents(db.pool, db.schema, { flows: [FLOW], from: '2000-01-01', to: '2100-01-01' });
}

describe('applyIncidentDrafts', () => {
  it('opens a paging incident with one chat message carrying the owner mention and the page link', async () => {
    const changes = await day('2026-11-18', [draft({ day: '2026-11-18', severity: 'page' })]);
    const [incident] = await incidents();
    expect(changes.opened).toEqual([incident!.id]);
    expect(incident).toMatchObject({ status: 'open', severity: 'page', openedDay: '2026-11-18', lastSeenDay: '2026-11-18', daysSeen: 1, notifiedSeverity: 'page' });
    expect(incident!.id).toMatch(/^monthly_pass-20261118-[0-9a-f]{8}$/);
    const messages = await outboxRows(db.pool, db.schema);
    expect(messages.map((m) => [m.incident_id, m.event, m.day, m.state])).toEqual([[incident!.id, 'opened', '2026-11-18', 'pending']]);
    const text = JSON.stringify(messages[0]!.payload);
    expect(text).toContain(MENTION);
    expect(text).toContain(`http://plumbline.metropass.example/incidents/${incident!.id}`);
  });

  it('keeps a five-day incident as one incident with one message', async () => {
    for (const d of daysBetween('2026-11-18', '2026-11-22')) await day(d, [draft({ day: d, since: '2026-11-18' })]);
    const list = await incidents();
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ status: 'ongoing', daysSeen: 5, since: '2026-11-18', lastSeenDay: '2026-11-22' });
    expect((await outboxRows(db.pool, db.schema)).map((m) => m.event)).toEqual(['opened']);
    const detail = await loadIncident(db.pool, db.schema, list[0]!.id);
    expect(detail!.sightings.map((s) => s.day)).toEqual(daysBetween('2026-11-18', '2026-11-22'));
  });

  it('announces a severity rise once, and not before repeat_after has passed', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18', severity: 'warn' })], { now: clockFor('2026-11-18') });
    // Judged 2 hours after the opening message: sooner than repeat_after (24 h), so the rise waits.
    await day('2026-11-19', [draft({ day: '2026-11-19', since: '2026-11-18', severity: 'page' })], { now: clockFor('2026-11-18', 2) });
    expect((await outboxRows(db.pool, db.schema)).map((m) => m.event)).toEqual(['opened']);
    // The next day the wait is over and the rise still holds: announced once.
    await day('2026-11-20', [draft({ day: '2026-11-20', since: '2026-11-18', severity: 'page' })]);
    await day('2026-11-21', [draft({ day: '2026-11-21', since: '2026-11-18', severity: 'page' })]);
    await day('2026-11-22', [draft({ day: '2026-11-22', since: '2026-11-18', severity: 'warn' })]);
    const messages = await outboxRows(db.pool, db.schema);
    expect(messages.map((m) => [m.event, m.day])).toEqual([
      ['opened', '2026-11-18'],
      ['severity_raised', '2026-11-20'],
    ]);
    expect(messages[1]!.payload.text).toMatch(/^page ▮▮▮ raised from warn: /);
    const [incident] = await incidents();
    expect(incident).toMatchObject({ severity: 'page', notifiedSeverity: 'page' });
  });

  it('resolves after resolve_after_days clean judged days, with one resolution message', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18' })]);
    await day('2026-11-19', [draft({ day: '2026-11-19', since: '2026-11-18' })]);
    const first = await day('2026-11-20', []);
    expect(first.resolved).toEqual([]);
    expect((await incidents())[0]!.status).toBe('ongoing');
    const second = await day('2026-11-21', []);
    const [incident] = await incidents();
    expect(second.resolved).toEqual([incident!.id]);
    expect(incident).toMatchObject({ status: 'resolved', resolvedDay: '2026-11-21', resolution: 'clean_days' });
    expect((await outboxRows(db.pool, db.schema)).map((m) => [m.event, m.day])).toEqual([
      ['opened', '2026-11-18'],
      ['resolved', '2026-11-21'],
    ]);
    await day('2026-11-22', []);
    expect(await outboxRows(db.pool, db.schema)).toHaveLength(2);
  });

  it('does not count not_ready days as clean', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18' })]);
    await day('2026-11-19', [], { verdict: 'not_ready' });
    await day('2026-11-20', [], { verdict: 'not_ready' });
    expect((await incidents())[0]!.status).toBe('open');
    await day('2026-11-21', []);
    expect((await incidents())[0]!.status).toBe('open');
    await day('2026-11-22', []);
    expect((await incidents())[0]).toMatchObject({ status: 'resolved', resolvedDay: '2026-11-22' });
  });

  it('records muted incidents without ever announcing them', async () => {
    for (const d of daysBetween('2026-11-18', '2026-11-20')) await day(d, [draft({ day: d, since: '2026-11-18', muted: true, severity: d === '2026-11-20' ? 'page' : 'note' })]);
    await day('2026-11-21', []);
    await day('2026-11-22', []);
    const [incident] = await incidents();
    expect(incident).toMatchObject({ muted: true, status: 'resolved', daysSeen: 3, notifiedSeverity: null });
    expect(await outboxRows(db.pool, db.schema)).toEqual([]);
  });

  it('never sends a note to chat, nor its resolution', async () => {
    // README: a note is "recorded and in the digest only" (a declared holiday, a restated day).
    for (const d of daysBetween('2026-11-18', '2026-11-19')) await day(d, [draft({ day: d, since: '2026-11-18', severity: 'note' })]);
    await day('2026-11-20', []);
    await day('2026-11-21', []);
    const [incident] = await incidents();
    expect(incident).toMatchObject({ severity: 'note', status: 'resolved', daysSeen: 2, notifiedSeverity: null });
    expect(await outboxRows(db.pool, db.schema)).toEqual([]);
  });

  it('announces a note once it rises to warn, as its opening', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18', severity: 'note' })]);
    await day('2026-11-19', [draft({ day: '2026-11-19', since: '2026-11-18', severity: 'warn' })]);
    await day('2026-11-20', []);
    await day('2026-11-21', []);
    expect((await outboxRows(db.pool, db.schema)).map((m) => [m.event, m.day])).toEqual([
      ['opened', '2026-11-19'],
      ['resolved', '2026-11-21'],
    ]);
  });

  describe('a data delay every flow saw', () => {
    const policy = { ...POLICY, owners: { ...POLICY.owners, [SIGNUP.owner]: { chat_mention: '<!subteam^S0ACCOUNTS>', email: ['accounts-team@metropass.example'] } } };
    const both = (d: string, verdicts: { pass?: 'judged' | 'not_ready'; signup?: 'judged' | 'not_ready'; delay?: boolean } = {}) =>
      judgeFlows(
        db.pool,
        db.schema,
        d,
        [
          { flow: SIGNUP.flow, drafts: verdicts.delay ? [delayDraft(d, SIGNUP.flow, SIGNUP.owner)] : [], verdict: verdicts.signup ?? 'judged' },
          { flow: FLOW, drafts: verdicts.delay ? [delayDraft(d)] : [], verdict: verdicts.pass ?? 'judged' },
        ],
        { policy },
      );
    const all = () => listIncidents(db.pool, db.schema, { flows: [FLOW, SIGNUP.flow], from: '2000-01-01', to: '2100-01-01' });

    it('is one incident and one message, listing the flows it holds back and naming their owners', async () => {
      const changes = await both('2026-11-30', { delay: true, pass: 'not_ready', signup: 'not_ready' });
      const list = await all();
      expect(list).toHaveLength(1);
      expect(changes.opened).toEqual([list[0]!.id]);
      expect(list[0]).toMatchObject({ flow: SIGNUP.flow, flows: [SIGNUP.flow, FLOW], owners: [SIGNUP.owner, OWNER], causeLabel: 'data_delay' });
      const messages = await outboxRows(db.pool, db.schema);
      expect(messages.map((m) => m.event)).toEqual(['opened']);
      const text = JSON.stringify(messages[0]!.payload);
      expect(text).toContain(`${SIGNUP.flow}, ${FLOW}`);
      // A warn names the owners; only a page mentions them.
      expect(text).toContain(`Owners: ${SIGNUP.owner}, ${OWNER}`);
      expect(text).not.toContain(MENTION);
      // Both flows saw the same words: the message lists them once.
      expect(text.split('• freshness: events for 2026-11-30 from web stopped').length - 1).toBe(1);
      const detail = await loadIncident(db.pool, db.schema, list[0]!.id);
      expect(detail!.sightings.map((s) => [s.day, s.flows, s.symptoms.length])).toEqual([['2026-11-30', [SIGNUP.flow, FLOW], 2]]);
    });

    it('resolves only on days every flow it holds back judged', async () => {
      await both('2026-11-30', { delay: true, pass: 'not_ready', signup: 'not_ready' });
      await both('2026-12-01', { signup: 'not_ready' });
      await both('2026-12-02');
      expect((await all())[0]!.status).toBe('open');
      await both('2026-12-03');
      expect((await all())[0]).toMatchObject({ status: 'resolved', resolvedDay: '2026-12-03' });
      expect((await outboxRows(db.pool, db.schema)).map((m) => [m.event, m.day])).toEqual([
        ['opened', '2026-11-30'],
        ['resolved', '2026-12-03'],
      ]);
    });

    it('takes in a flow that sees it on a later day', async () => {
      await judgeFlows(db.pool, db.schema, '2026-11-30', [{ flow: FLOW, drafts: [delayDraft('2026-11-30')] }, { flow: SIGNUP.flow, drafts: [] }], { policy });
      expect((await all())[0]).toMatchObject({ flows: [FLOW], owners: [OWNER] });
      await both('2026-12-01', { delay: true });
      const list = await all();
      expect(list).toHaveLength(1);
      expect(list[0]).toMatchObject({ flows: [FLOW, SIGNUP.flow], owners: [OWNER, SIGNUP.owner], daysSeen: 2 });
    });
  });

  it('announces an incident once its mute no longer covers it', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18', muted: true })]);
    await day('2026-11-19', [draft({ day: '2026-11-19', since: '2026-11-18' })]);
    expect((await outboxRows(db.pool, db.schema)).map((m) => [m.event, m.day])).toEqual([['opened', '2026-11-19']]);
  });

  it('keeps a shift that hovers around its thresholds one incident, whose label changes only on stronger evidence', async () => {
    // android lost a quarter of its people at the intro step: findings come and go, labelled behaviour one day, segment the next.
    const shift = (d: string, label: 'behaviour' | 'segment' | 'platform', confidence: number, event = 'screen_shown') => {
      const base = draft({ day: d, subject: 'intro', event, version: '', fingerprint: `${FLOW}|${label}|intro|${label === 'platform' ? 'android' : '*'}|*` });
      return { ...base, version: null, cause: { ...base.cause, label, confidence, version: null } };
    };
    await day('2026-11-18', [shift('2026-11-18', 'behaviour', 0.6)]);
    await day('2026-11-19', [shift('2026-11-19', 'segment', 0.5)]);
    await day('2026-11-20', []);
    await day('2026-11-21', []);
    // Resolved after two clean days; seen again within JOIN_DAYS of its last sighting: the same incident, still behaviour.
    expect((await incidents())[0]).toMatchObject({ status: 'resolved', causeLabel: 'behaviour' });
    await day('2026-11-22', [shift('2026-11-22', 'segment', 0.55)]);
    expect(await incidents()).toHaveLength(1);
    expect((await incidents())[0]).toMatchObject({ status: 'ongoing', causeLabel: 'behaviour', daysSeen: 3, resolvedDay: null });
    // Stronger evidence does change it.
    await day('2026-11-23', [shift('2026-11-23', 'platform', 0.9)]);
    const list = await incidents();
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ causeLabel: 'platform', daysSeen: 4, openedDay: '2026-11-18' });
    // Two labels of the same shift on one day are one sighting; another subject is another incident.
    await day('2026-11-24', [shift('2026-11-24', 'segment', 0.5), shift('2026-11-24', 'behaviour', 0.6, 'intro_opened'), draft({ day: '2026-11-24', subject: 'done' })]);
    const last = await incidents();
    expect(last).toHaveLength(2);
    expect(last.find((i) => i.subject === 'intro')).toMatchObject({ daysSeen: 5, causeLabel: 'platform' });
  });

  // Issue 13 item 6: an open incident stays open while its series stays outside its expected band.
  it('keeps an incident open while its series stays outside its band under the finding thresholds, in the same direction', async () => {
    const first = draft({ day: '2026-11-18' });
    const symptom = first.symptoms[0]!;
    const still = (direction: 'up' | 'down', seriesKey = symptom.seriesKey): DayHolds => ({
      outside: [{ check: 'volume', flow: FLOW, seriesKey, platform: 'android', direction, observed: 2500, expected: { low: 2700, high: 3400, center: 3000 } }],
      calendar: [],
    });
    await day('2026-11-18', [first]);
    for (const d of ['2026-11-19', '2026-11-20', '2026-11-21']) await day(d, [], { holds: still('down') });
    expect((await incidents())[0]).toMatchObject({ status: 'open', resolvedDay: null, daysSeen: 1 });
    // A move the other way, or another series, is no reason to stay open.
    await day('2026-11-22', [], { holds: still('up') });
    await day('2026-11-23', [], { holds: still('down', 'volume:people:other:android:*') });
    expect((await incidents())[0]).toMatchObject({ status: 'resolved', resolvedDay: '2026-11-23', resolution: 'clean_days' });
    expect((await outboxRows(db.pool, db.schema)).map((m) => [m.event, m.day])).toEqual([
      ['opened', '2026-11-18'],
      ['resolved', '2026-11-23'],
    ]);
  });

  // Issue 13 item 2: a calendar day is neither a clean day nor a break in the incident's run.
  it('counts a calendar day neither as clean nor as a break: an incident seen before and after it is one, never resolved between', async () => {
    const holiday: DayHolds = { outside: [], calendar: [FLOW] };
    await day('2026-11-18', [draft({ day: '2026-11-18' })]);
    await day('2026-11-19', [], { holds: holiday });
    await day('2026-11-20', []);
    expect((await incidents())[0]).toMatchObject({ status: 'open', resolvedDay: null });
    await day('2026-11-21', [draft({ day: '2026-11-21', since: '2026-11-21' })]);
    expect(await incidents()).toHaveLength(1);
    expect((await outboxRows(db.pool, db.schema)).map((m) => m.event)).toEqual(['opened']);
    // Judged again, the holiday leaves the same.
    await day('2026-11-19', [], { holds: holiday });
    expect((await incidents())[0]).toMatchObject({ status: 'ongoing', resolvedDay: null, daysSeen: 2 });
  });

  it('keeps a platform that lost people one incident while the step that shows it changes, and takes in what that platform alone shows', async () => {
    const onAndroid = (d: string, label: 'platform' | 'behaviour' | 'segment', subject: string, confidence: number) => {
      const base = draft({ day: d, subject, version: '' });
      const fingerprint = label === 'platform' ? `${FLOW}|platform|platform|android|*` : `${FLOW}|${label}|${subject}|*|*`;
      return { ...base, fingerprint, version: null, cause: { ...base.cause, label, confidence, version: null } };
    };
    await day('2026-11-18', [onAndroid('2026-11-18', 'platform', 'intro', 0.9)]);
    await day('2026-11-19', []);
    await day('2026-11-20', []);
    expect((await incidents())[0]).toMatchObject({ status: 'resolved' });
    // The next sighting is on another step, and one that looks like behaviour there: the same shift.
    await day('2026-11-21', [onAndroid('2026-11-21', 'platform', 'done', 0.85)]);
    await day('2026-11-22', [onAndroid('2026-11-22', 'behaviour', 'rider', 0.3)]);
    const list = await incidents();
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ causeLabel: 'platform', daysSeen: 3, openedDay: '2026-11-18', status: 'ongoing' });
    await day('2026-11-23', []);
    await day('2026-11-24', []);
    // Behaviour first, on android alone: the platform cause that explains it later joins it too.
    await day('2026-12-10', [onAndroid('2026-12-10', 'behaviour', 'rider', 0.3)]);
    await day('2026-12-11', [onAndroid('2026-12-11', 'platform', 'intro', 0.9)]);
    const later = (await incidents()).filter((i) => i.openedDay === '2026-12-10');
    expect(later).toHaveLength(1);
    expect(later[0]).toMatchObject({ causeLabel: 'platform', daysSeen: 2 });
  });

  it('opens a new incident when a resolved fingerprint comes back', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18' })]);
    await day('2026-11-19', []);
    await day('2026-11-20', []);
    await day('2026-11-23', [draft({ day: '2026-11-23' })]);
    const list = await incidents();
    expect(list.map((i) => [i.openedDay, i.status])).toEqual([
      ['2026-11-23', 'open'],
      ['2026-11-18', 'resolved'],
    ]);
    expect((await outboxRows(db.pool, db.schema)).map((m) => m.event)).toEqual(['opened', 'resolved', 'opened']);
  });

  it('tracks two fingerprints of one day as two incidents', async () => {
    const changes = await day('2026-11-18', [draft({ day: '2026-11-18' }), draft({ day: '2026-11-18', platform: 'ios', version: '5.2.0' })]);
    expect(changes.opened).toHaveLength(2);
    expect(new Set((await outboxRows(db.pool, db.schema)).map((m) => m.incident_id)).size).toBe(2);
  });

  it('leaves the same incidents and messages when (flow, day)s are judged again', async () => {
    const days = daysBetween('2026-11-18', '2026-11-24');
    const draftsFor = (d: string): IncidentDraft[] => {
      const out: IncidentDraft[] = [];
      if (d <= '2026-11-20') out.push(draft({ day: d, since: '2026-11-18', severity: d >= '2026-11-20' ? 'page' : 'warn' }));
      if (d >= '2026-11-19' && d <= '2026-11-22') out.push(draft({ day: d, since: '2026-11-19', platform: 'ios', version: '5.2.0', muted: d === '2026-11-19' }));
      return out;
    };
    const snapshot = async () => {
      const s = quoteIdent(db.schema);
      const incidentsNow = (await db.pool.query(`select * from ${s}.incidents order by id`)).rows.map(({ updated_at: _u, ...rest }) => rest);
      const sightings = (await db.pool.query(`select * from ${s}.incident_days order by incident_id, day`)).rows;
      const outbox = (await db.pool.query(`select incident_id, event, day, idempotency_key, payload from ${s}.outbox order by id`)).rows;
      return { incidentsNow, sightings, outbox };
    };
    for (const d of days) await day(d, draftsFor(d));
    const first = await snapshot();
    expect(first.outbox.map((m) => m.event)).toEqual(['opened', 'severity_raised', 'opened', 'resolved', 'resolved']);
    // The same day twice in a row, then the whole range again in order, then one day in the middle.
    await day('2026-11-24', draftsFor('2026-11-24'));
    for (const d of days) await day(d, draftsFor(d));
    await day('2026-11-20', draftsFor('2026-11-20'));
    expect(await snapshot()).toEqual(first);
  });

  it('withdraws an incident when judging its only day again no longer shows it', async () => {
    await day('2026-11-18', [draft({ day: '2026-11-18' })]);
    const [before] = await incidents();
    await day('2026-11-18', []);
    const [after] = await incidents();
    expect(after).toMatchObject({ id: before!.id, status: 'resolved', resolution: 'withdrawn', daysSeen: 0, resolvedDay: '2026-11-18' });
    expect((await outboxRows(db.pool, db.schema)).map((m) => m.event)).toEqual(['opened', 'resolved']);
  });

  it('closes what the first judgement of a day saw on missing data as late data, once its late rows arrive', async () => {
    // 2026-11-18 lost 30% of android's rows at first: a platform drop and a behaviour move; a release break began the day before.
    const release = (d: string) => draft({ day: d, since: '2026-11-17' });
    const platform = draft({ day: '2026-11-18', fingerprint: `${FLOW}|platform|intro|android|*`, subject: 'intro', version: '' });
    const behaviour = draft({ day: '2026-11-18', fingerprint: `${FLOW}|behaviour|done|*|*`, subject: 'done', severity: 'note' });
    await day('2026-11-17', [release('2026-11-17')]);
    await day('2026-11-18', [release('2026-11-18'), platform, behaviour]);
    await day('2026-11-19', [release('2026-11-19')]);
    // The rows arrive on 2026-11-20: the daily run judges 2026-11-18 again with them; only the release break is left.
    await day('2026-11-18', [release('2026-11-18')], { lateRows: true, now: clockFor('2026-11-20') });
    await day('2026-11-20', [release('2026-11-20')]);
    const byFingerprint = new Map((await incidents()).map((i) => [i.fingerprint, i]));
    for (const closed of [platform, behaviour]) {
      expect(byFingerprint.get(closed.fingerprint)).toMatchObject({ status: 'resolved', resolution: 'late_data', causeLabel: 'data_delay', resolvedDay: '2026-11-18', openedDay: '2026-11-18' });
    }
    expect(byFingerprint.get(release('2026-11-17').fingerprint)).toMatchObject({ status: 'ongoing', resolution: null, causeLabel: 'release', daysSeen: 4 });
    // One message each for what was announced: the platform drop's opening, then its closing as late data; the note stays silent.
    const messages = await outboxRows(db.pool, db.schema);
    const platformId = byFingerprint.get(platform.fingerprint)!.id;
    expect(messages.filter((m) => m.incident_id === platformId).map((m) => m.event)).toEqual(['opened', 'resolved']);
    expect(JSON.stringify(messages.find((m) => m.incident_id === platformId && m.event === 'resolved')!.payload)).toContain('Late rows restated 2026-11-18');
    expect(messages.filter((m) => m.incident_id === byFingerprint.get(behaviour.fingerprint)!.id)).toEqual([]);
  });

  it('says late rows once, on the incidents they close: the arrival day opens no incident of its own for them', async () => {
    const platform = draft({ day: '2026-11-18', fingerprint: `${FLOW}|platform|intro|android|*`, subject: 'intro', version: '' });
    await day('2026-11-18', [platform]);
    await day('2026-11-19', []);
    // The rows arrive on 2026-11-20: 2026-11-18 is judged again with them, then 2026-11-20 itself, whose freshness notes the restatement.
    await day('2026-11-18', [], { lateRows: true, now: clockFor('2026-11-20') });
    await day('2026-11-20', [restatedDraft('2026-11-20', '2026-11-18')]);
    const list = await incidents();
    expect(list.map((i) => [i.fingerprint, i.resolution])).toEqual([[platform.fingerprint, 'late_data']]);
    // The restatement stays among the day's findings.
    const { rows } = await db.pool.query(`select kind from ${quoteIdent(db.schema)}.findings where day = '2026-11-20'`);
    expect(rows.map((r) => r.kind)).toEqual(['restated']);
  });

  it('keeps the restatement note as an incident when nothing its first judgement opened was closed by it', async () => {
    await day('2026-11-18', []);
    await day('2026-11-18', [], { lateRows: true, now: clockFor('2026-11-20') });
    await day('2026-11-20', [restatedDraft('2026-11-20', '2026-11-18')]);
    expect((await incidents()).map((i) => [i.causeLabel, i.severity, i.openedDay])).toEqual([['data_delay', 'note', '2026-11-20']]);
  });

  it('keeps the restatement note of a flow whose own incidents were not closed, when another flow had some closed', async () => {
    const other = { ...draft({ day: '2026-11-18', fingerprint: `${SIGNUP.flow}|platform|intro|android|*`, subject: 'intro', version: '' }), flows: [SIGNUP.flow], owners: [SIGNUP.owner] };
    await judgeFlows(db.pool, db.schema, '2026-11-18', [{ flow: FLOW, drafts: [] }, { flow: SIGNUP.flow, drafts: [other] }]);
    await judgeFlows(db.pool, db.schema, '2026-11-18', [{ flow: FLOW, drafts: [] }, { flow: SIGNUP.flow, drafts: [] }], { lateRows: true, now: clockFor('2026-11-20') });
    await judgeFlows(db.pool, db.schema, '2026-11-20', [{ flow: FLOW, drafts: [restatedDraft('2026-11-20', '2026-11-18')] }, { flow: SIGNUP.flow, drafts: [] }]);
    expect((await incidents()).map((i) => [i.causeLabel, i.severity, i.openedDay])).toEqual([['data_delay', 'note', '2026-11-20']]);
  });

  it('rejects drafts of another flow or day', async () => {
    await expect(day('2026-11-18', [draft({ day: '2026-11-17' })])).rejects.toThrow(/not monthly_pass on 2026-11-18/);
  });
});
