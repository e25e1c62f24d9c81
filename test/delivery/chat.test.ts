/**
 * Chat rendering of client data: every hostile string, used as event name,
 * title, cause sentence, symptom message and evidence value, comes out as
 * inert text (no mention but the configured owner's, no link but the incident
 * page's), within the block limits, without direction overrides or controls.
 * Also: escaping per the chat markup's rules, and values hidden by policy.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CHAT_FORMAT_IDS, mainSchema } from '../../service/config/schema.js';
import { CHAT_FORMATS, slackFormat, type SlackMessage } from '../../service/delivery/chat.js';
import { presentIncident } from '../../service/present/present.js';
import { HIDE_ALL_VALUES, loadValuePolicy, type ValuePolicy } from '../../service/present/privacy.js';
import { chatText, cleanText, clip, escapeChat, fitChat } from '../../service/present/text.js';
import { migrate } from '../../service/db/migrate.js';
import { loadIncident } from '../../service/incidents/store.js';
import { incidentUrl, type Incident, type IncidentEvent, type Sighting } from '../../service/incidents/types.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { MENTION, OWNER, POLICY, draft, judge, outboxRows, type DraftOptions } from '../incidents/fixtures.js';
import { testMain } from './fixtures.js';
import { FORBIDDEN_CHARS, HOSTILE, STORABLE_HOSTILE } from './hostile.js';

const SHOW_ALL: ValuePolicy = { visible: () => true };
/** Half of a UTF-16 pair without its other half: what a careless cut leaves. */
const LONE_SURROGATE = /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/;

function incidentFrom(options: DraftOptions): { incident: Incident; sighting: Sighting } {
  const d = draft(options);
  const incident: Incident = {
    id: 'monthly_pass-20261118-0a1b2c3d',
    fingerprint: d.fingerprint,
    flow: d.flows[0]!,
    owner: d.owners[0]!,
    flows: d.flows,
    owners: d.owners,
    status: 'open',
    severity: d.severity,
    muted: false,
    title: d.title,
    subject: d.subject,
    platform: d.platform,
    version: d.version,
    causeLabel: d.cause.label,
    since: d.since,
    openedDay: d.day,
    lastSeenDay: d.day,
    daysSeen: 1,
    resolvedDay: null,
    resolution: null,
    notifiedSeverity: null,
    lastNotifiedAt: null,
    openedAt: '2026-11-19T08:30:00.000Z',
    updatedAt: '2026-11-19T08:30:00.000Z',
    resolvedAt: null,
  };
  return { incident, sighting: { incidentId: incident.id, flows: d.flows, day: d.day, since: d.since, severity: d.severity, muted: false, title: d.title, cause: d.cause, symptoms: d.symptoms } };
}

function render(options: DraftOptions, event: IncidentEvent = 'opened', values: ValuePolicy = SHOW_ALL): { message: SlackMessage; incident: Incident } {
  const { incident, sighting } = incidentFrom(options);
  const resolved: Incident = event === 'resolved' ? { ...incident, status: 'resolved', resolvedDay: '2026-11-21', resolution: 'clean_days' } : incident;
  const message = slackFormat.render({
    event,
    incident: resolved,
    presentation: presentIncident(resolved, sighting, values),
    mentions: { [OWNER]: MENTION },
    url: incidentUrl(POLICY.publicUrl, incident.id),
    resolveAfterDays: 2,
  });
  return { message, incident };
}

interface TextObject {
  text: string;
  limit: number;
}

/** Every mrkdwn text of a message, with its limit (Slack Block Kit reference: section text 3,000, field 2,000). */
function texts(message: SlackMessage): TextObject[] {
  const out: TextObject[] = [{ text: message.text, limit: 3000 }];
  for (const block of message.blocks as Array<{ text?: { text: string }; fields?: Array<{ text: string }> }>) {
    if (block.text) out.push({ text: block.text.text, limit: 3000 });
    for (const field of block.fields ?? []) out.push({ text: field.text, limit: 2000 });
  }
  return out;
}

function expectInert(message: SlackMessage, incident: Incident, input: string): void {
  const allowed = new Set([MENTION, `<${incidentUrl(POLICY.publicUrl, incident.id)}|Open incident ${incident.id}>`]);
  for (const { text, limit } of texts(message)) {
    const context = `input ${JSON.stringify(input.slice(0, 120))}\nrendered ${JSON.stringify(text.slice(0, 400))}`;
    const tokens = text.match(/<[^<>]*>/g) ?? [];
    for (const token of tokens) expect(allowed.has(token), context).toBe(true);
    expect(text.split('<').length - 1, context).toBe(tokens.length);
    expect(text.split('>').length - 1, context).toBe(tokens.length);
    const rest = tokens.reduce((acc, token) => acc.replace(token, ''), text);
    expect(rest, context).not.toMatch(/@(channel|here|everyone)/);
    expect(rest, context).not.toContain('://');
    expect(text.length, context).toBeLessThanOrEqual(limit);
    expect(FORBIDDEN_CHARS.test(text), context).toBe(false);
    expect(LONE_SURROGATE.test(text), context).toBe(false);
  }
  expect(message.unfurl_links).toBe(false);
  expect(message.unfurl_media).toBe(false);
}

describe('chat text', () => {
  it('escapes the three control characters of the chat markup and nothing else', () => {
    expect(escapeChat('a & b < c > d "e" \'f\'')).toBe('a &amp; b &lt; c &gt; d "e" \'f\'');
    expect(escapeChat('<!channel>')).toBe('&lt;!channel&gt;');
    expect(escapeChat('<https://x.example|y>')).toBe('&lt;https://x.example|y&gt;');
  });

  it('breaks bare mentions and addresses with an invisible word joiner', () => {
    expect(chatText('@channel #general www.evil.example <https://x.example|y>', 100)).toBe(
      '@\u2060channel #\u2060general www\u2060.evil.example &lt;https:\u2060//x.example|y&gt;',
    );
    expect(escapeChat('fare_zone@2 and 7.4.0')).toBe('fare_zone@\u20602 and 7.4.0');
  });

  it('clips on grapheme boundaries, before escaping, and never splits an entity afterwards', () => {
    const family = '👩‍👩‍👧‍👦';
    expect(clip(family.repeat(3), family.length * 2)).toBe(`${family}…`);
    expect(chatText('<'.repeat(100), 10)).toBe(`${'&lt;'.repeat(9)}…`);
    expect(fitChat('ab&amp;cd', 5)).toBe('ab…');
    expect(cleanText('a\u202Eb\nc\u0000d', 20)).toBe('ab cd');
  });
});

describe('chat message', () => {
  for (const [name, value] of Object.entries(HOSTILE)) {
    it(`renders the hostile "${name}" string inert in every field`, () => {
      const options: DraftOptions = {
        day: '2026-11-18',
        event: value,
        subject: value,
        title: `${value} stopped`,
        sentence: `android 7.4.0 stopped sending ${value}`,
        message: `${value} fell to 0`,
        evidence: { value, first_seen: '2026-11-16', adoption_share: 0.41 },
        platform: 'android',
      };
      for (const event of ['opened', 'still_held_back', 'resolved'] as const) {
        const { message, incident } = render(options, event);
        expectInert(message, incident, value);
      }
    });

    it(`renders the hostile "${name}" string inert in a backfill's summary`, () => {
      const { incident } = render({ day: '2026-11-18', event: value, subject: value, title: `${value} stopped`, platform: 'android' }, 'opened');
      const url = incidentUrl(POLICY.publicUrl, incident.id);
      const message = slackFormat.renderBackfill({ from: '2026-07-01', to: '2026-11-18', flows: [value], recorded: 3, open: [{ incident, url }], overviewUrl: POLICY.publicUrl });
      // The links are ours; the title inside one is escaped text: no markup, no mention, no address.
      const links = texts(message).flatMap(({ text }) => text.match(/<[^<>]*>/g) ?? []);
      expect(links.length).toBe(2);
      for (const link of links) {
        expect(link.startsWith(`<${url}|`) || link.startsWith(`<${POLICY.publicUrl}|`), link).toBe(true);
        expect(link.slice(link.indexOf('|')), link).not.toMatch(/@(channel|here|everyone)|:\/\//);
      }
      for (const { text, limit } of texts(message)) {
        const bare = links.reduce((acc, link) => acc.replace(link, ''), text);
        expect(bare, text).not.toMatch(/[<>]|@(channel|here|everyone)|:\/\//);
        expect(FORBIDDEN_CHARS.test(text), text).toBe(false);
        expect(text.length).toBeLessThanOrEqual(limit);
      }
    });
  }

  it('keeps ordinary text, emoji and the owner mention readable', () => {
    const { message } = render({ day: '2026-11-18', severity: 'page', title: 'Zone picker 🚇 silent on android 7.4.0' });
    const all = texts(message).map((t) => t.text).join('\n');
    expect(all).toContain('Zone picker 🚇 silent on android 7.4.0');
    expect(all).toContain(`Owner: ${MENTION}`);
    expect(all).toContain('*Likely cause:* app release (confidence 82%)');
    expect(all).toMatch(/\*Observed\* \(people\)\n0/);
  });

  it('mentions the owner on a page only: a warn names the owner without notifying (README, severities)', () => {
    const page = JSON.stringify(render({ day: '2026-11-18', severity: 'page' }).message);
    const warn = JSON.stringify(render({ day: '2026-11-18', severity: 'warn' }).message);
    expect(page).toContain(JSON.stringify(MENTION).slice(1, -1));
    expect(warn).not.toContain(JSON.stringify(MENTION).slice(1, -1));
    expect(warn).toContain(`Owner: ${OWNER}`);
  });

  it('shows no parameter values when values are hidden', () => {
    const secret = 'rider-4f9c2a11';
    const options: DraftOptions = {
      day: '2026-11-18',
      event: 'zone_selected',
      param: 'rider_ref',
      title: `new value ${secret} for rider_ref`,
      sentence: `ios 5.2.0 sends rider_ref = ${secret}`,
      message: `new value ${secret}`,
      evidence: { example: secret, share: 0.2 },
    };
    const shown = JSON.stringify(render(options, 'opened', SHOW_ALL).message);
    expect(shown).toContain(secret);
    const hidden = JSON.stringify(render(options, 'opened', HIDE_ALL_VALUES).message);
    expect(hidden).not.toContain(secret);
    expect(hidden).toContain('zone_selected.rider_ref');
    expect(hidden).toContain('parameter values are not shown');
  });
});

describe('chat marks', () => {
  const lead = (message: SlackMessage) => texts(message)[1]!.text.split('\n')[0];
  /** Emoji shortcodes (`:name:`) and pictographs: the marks are plain text of our own. */
  const EMOJI = /:[a-z0-9_+-]+:|\p{Extended_Pictographic}/u;

  it.each([
    ['page', '▮▮▮'],
    ['warn', '▮▮▯'],
    ['note', '▮▯▯'],
  ] as const)('an opened %s incident leads with its severity word, then its gauge', (severity, gauge) => {
    const { message } = render({ day: '2026-11-18', severity, title: 'rider step stopped on android 7.4.0' });
    expect(lead(message)).toMatch(new RegExp(`^\\*${severity}\\* ${gauge} · opened · monthly_pass · `));
    expect(message.text).toMatch(new RegExp(`^${severity} ${gauge} opened: rider step stopped`));
    for (const { text } of texts(message)) expect(text).not.toMatch(EMOJI);
  });

  it('a resolved incident leads with "resolved" and the emptied gauge', () => {
    const { message } = render({ day: '2026-11-18', severity: 'page', title: 'rider step stopped on android 7.4.0' }, 'resolved');
    expect(lead(message)).toMatch(/^\*resolved\* ▯▯▯ · monthly_pass · /);
    expect(message.text).toMatch(/^resolved ▯▯▯: rider step stopped/);
    for (const { text } of texts(message)) expect(text).not.toMatch(EMOJI);
  });

  it('has a format for every id delivery.chat.format accepts, slack the default', () => {
    expect(Object.keys(CHAT_FORMATS)).toEqual([...CHAT_FORMAT_IDS]);
    expect(Object.values(CHAT_FORMATS).map((format) => format.id)).toEqual([...CHAT_FORMAT_IDS]);
    expect(testMain().delivery.chat.format).toBe('slack');
    const noDelivery = { timezone: 'America/New_York', warehouse: { events_table: 'transit.events', platforms: { web: ['web'] } } };
    expect(mainSchema.parse(noDelivery).delivery.chat.format).toBe('slack');
  });
});

describe('chat message from the incident tables', () => {
  let db: TestSchema;
  beforeAll(async () => {
    db = await createTestSchema('chat');
    await migrate(db.pool, db.schema);
  });
  afterAll(async () => {
    await db.drop();
  });

  it('queues an inert message for a hostile incident, and hides values of a key with many distinct values', async () => {
    const s = `"${db.schema}"`;
    await db.pool.query(
      `insert into ${s}.param_days (day, event, platform, version, key, json_type, events, distinct_values, top_values) values
        ('2026-11-18', 'zone_selected', 'ios', '5.2.0', 'fare_zone', 'string', 900, 3, '[]'),
        ('2026-11-18', 'zone_selected', 'ios', '5.2.0', 'rider_ref', 'string', 900, null, '[]')`,
    );
    const hostile = Object.values(STORABLE_HOSTILE).join(' ');
    await judge(db.pool, db.schema, '2026-11-18', [
      draft({ day: '2026-11-18', event: 'zone_selected', param: 'fare_zone', platform: 'ios', version: '5.2.0', title: `fare_zone value ${hostile}`, message: `new value ${HOSTILE.phishing}` }),
      draft({ day: '2026-11-18', event: 'zone_selected', param: 'rider_ref', platform: 'ios', version: '5.2.0', title: 'rider_ref value rider-4f9c2a11', message: 'new value rider-4f9c2a11', evidence: { example: 'rider-4f9c2a11' } }),
    ]);
    const rows = await outboxRows(db.pool, db.schema);
    expect(rows).toHaveLength(2);
    for (const row of rows) {
      const { incident } = (await loadIncident(db.pool, db.schema, row.incident_id))!;
      expectInert(row.payload as SlackMessage, incident, hostile);
    }
    const fare = rows.find((row) => JSON.stringify(row.payload).includes('fare_zone'))!;
    const rider = rows.find((row) => JSON.stringify(row.payload).includes('rider_ref'))!;
    expect(JSON.stringify(fare.payload)).toContain('Renew your Metro Pass');
    expect(JSON.stringify(rider.payload)).not.toContain('rider-4f9c2a11');
    const policy = await loadValuePolicy(db.pool, db.schema, false, [{ event: 'zone_selected', key: 'fare_zone' }, { event: 'zone_selected', key: 'rider_ref' }], '2026-11-18', '2026-11-18');
    expect([policy.visible('zone_selected', 'fare_zone'), policy.visible('zone_selected', 'rider_ref'), policy.visible('zone_selected', 'other')]).toEqual([true, false, false]);
  });
});
