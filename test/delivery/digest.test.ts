/**
 * The weekly digest end to end: state tables holding five weeks of Metro Pass
 * funnels and a week of incidents whose event names and values are hostile;
 * a real SMTP server (smtp-server) receives the digest, mailparser reads it
 * back, and the test checks subject, recipients, both parts, the inline PNG
 * charts and their cid references, the escaping of every hostile string and
 * that high-cardinality values never appear. Also: sent once per week and
 * owner, the folder fallback, and the browser preview.
 */
import { mkdtemp, readFile, readdir, rm } from 'node:fs/promises';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { simpleParser, type AddressObject, type ParsedMail } from 'mailparser';
import { SMTPServer, type SMTPServerEnvelope } from 'smtp-server';
import { afterAll, beforeAll, describe, expect, it, onTestFailed } from 'vitest';
import type { FlowDefinition } from '../../checks/types.js';
import type { MainConfig } from '../../service/config/schema.js';
import { buildDigests, sendDigests, writeDigest, type SendRuntime } from '../../service/delivery/digest.js';
import { defaultWeek, loadDigests, weekStart } from '../../service/delivery/digest-data.js';
import { migrate } from '../../service/db/migrate.js';
import { quoteIdent } from '../../service/db/sql.js';
import { createLogger } from '../../service/log.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { FLOW, OWNER, draft, judge } from '../incidents/fixtures.js';
import { testMain } from './fixtures.js';
import { FORBIDDEN_CHARS, STORABLE_HOSTILE } from './hostile.js';

const WEEK = '2026-11-16';
const SECRET_VALUE = 'rider-4f9c2a11';
const SMTP_ENV = 'PLUMBLINE_TEST_SMTP';

const flow: FlowDefinition = {
  id: FLOW,
  owner: OWNER,
  steps: ['intro', 'zone', 'rider', 'review', 'done'].map((name) => ({ name, event: 'screen_shown', where: { view: name } })),
  conversionWindowSeconds: 1800,
  stepTimeCapSeconds: 300,
  entry: 'first_step_only',
  platforms: ['web', 'android', 'ios'],
  events: ['screen_shown'],
  contracts: {},
};

let db: TestSchema;
const hostileText = Object.values(STORABLE_HOSTILE).join(' ');

function runtime(main: MainConfig): SendRuntime {
  return {
    state: db.pool,
    stateSchema: db.schema,
    timezone: 'America/New_York',
    flows: [flow],
    config: { main, flows: [{ config: { flow: FLOW, title: 'Buy a monthly pass' } }] },
    log: createLogger({ level: 'silent' }),
  };
}

beforeAll(async () => {
  db = await createTestSchema('dig');
  await migrate(db.pool, db.schema);
  const s = quoteIdent(db.schema);
  // Five weeks of funnels: each step keeps 85% of the previous one, except
  // android from Nov 18 on, where the rider step keeps only 55%.
  await db.pool.query({
    text: `insert into ${s}.funnel_days (day, flow, platform, version, dimension, value, step, entered, reached, seconds_median, seconds_p90, timed)
      select d::date, $1, p, '*', '', '', st, case when st = 0 then 1000 else 0 end,
        round(1000 * power(0.85, st) * case when p = 'android' and d >= '2026-11-18' and st >= 2 then 0.55 / 0.85 else 1 end), null, null, 0
      from generate_series('2026-10-19'::date, '2026-11-22'::date, interval '1 day') d, unnest(array['web', 'android', 'ios']) p, generate_series(0, 4) st`,
    values: [FLOW],
  });
  await db.pool.query(
    `insert into ${s}.param_days (day, event, platform, version, key, json_type, events, distinct_values, top_values)
      select d::date, $1, 'ios', '5.2.0', k, 'string', 900, case k when 'fare_zone' then 4 else null end, '[]'
      from generate_series('2026-11-16'::date, '2026-11-22'::date, interval '1 day') d, unnest(array['fare_zone', 'rider_ref']) k`,
    [STORABLE_HOSTILE.html],
  );
  // A one-day incident on Monday, resolved on Wednesday.
  await judge(db.pool, db.schema, '2026-11-16', [draft({ day: '2026-11-16', event: STORABLE_HOSTILE.channel, subject: STORABLE_HOSTILE.channel, title: `${STORABLE_HOSTILE.channel} views dropped`, platform: 'web', version: '' })]);
  await judge(db.pool, db.schema, '2026-11-17', []);
  for (const day of ['2026-11-18', '2026-11-19', '2026-11-20', '2026-11-21', '2026-11-22']) {
    await judge(db.pool, db.schema, day, [
      draft({ day, since: '2026-11-18', title: `android 7.4.0 rider drop ${hostileText}`, sentence: `android 7.4.0 ${hostileText}`, metric: 'conversion', observed: 0.55 }),
      draft({ day, since: '2026-11-18', event: STORABLE_HOSTILE.html, param: 'fare_zone', platform: 'ios', version: '5.2.0', title: `new fare_zone value ${STORABLE_HOSTILE.phishing}`, message: `new value ${STORABLE_HOSTILE.phishing} ${STORABLE_HOSTILE.emoji}` }),
      draft({ day, since: '2026-11-18', event: STORABLE_HOSTILE.html, param: 'rider_ref', platform: 'ios', version: '5.2.0', title: `new rider_ref value ${SECRET_VALUE}`, message: `new value ${SECRET_VALUE}`, evidence: { example: SECRET_VALUE } }),
      draft({ day, since: '2026-11-18', subject: 'review', platform: 'web', version: '', muted: true, title: 'muted web review dip' }),
    ]);
  }
});
afterAll(async () => {
  await db.drop();
});

/** Every tag name in an HTML document: the digest may only contain these. */
const ALLOWED_TAGS = new Set(['!doctype', 'html', 'head', 'meta', 'title', 'body', 'div', 'h1', 'h2', 'h3', 'p', 'span', 'strong', 'a', 'img', 'table', 'thead', 'tbody', 'tr', 'th', 'td', 'bdi', 'br']);
const ALLOWED_ATTRIBUTES = new Set(['lang', 'charset', 'name', 'content', 'style', 'href', 'src', 'alt', 'width', 'role']);

/** A tag with only double-quoted attribute values, none holding a quote or angle bracket. */
const WELL_FORMED_TAG = /^<(!doctype html|\/[a-z0-9]+|[a-z0-9]+(\s+[a-z-]+="[^"<>]*")*)>$/;

function expectSafeHtml(html: string): void {
  for (const [tag] of html.matchAll(/<[^>]*>/g)) expect(WELL_FORMED_TAG.test(tag!), `malformed tag ${tag}`).toBe(true);
  for (const [, tag] of html.matchAll(/<\/?([!a-zA-Z][a-zA-Z0-9]*)/g)) expect(ALLOWED_TAGS.has(tag!.toLowerCase()), `tag <${tag}>`).toBe(true);
  for (const [, attribute] of html.matchAll(/\s([a-zA-Z-]+)="/g)) expect(ALLOWED_ATTRIBUTES.has(attribute!.toLowerCase()), `attribute ${attribute}`).toBe(true);
  expect(html).not.toMatch(/<script|onerror=|<!channel|<https:/i);
  expect(html).not.toMatch(/https?:\/\/evil|www\.evil/);
  expect(html).toContain('&lt;/td&gt;&lt;script&gt;alert(1)&lt;/script&gt;');
  expect(html).toContain('&lt;!channel&gt;');
  expect(FORBIDDEN_CHARS.test(html.replaceAll('\n', ''))).toBe(false);
  expect(html).not.toContain('zone_picker_'.repeat(20));
  expect(html).not.toContain(SECRET_VALUE);
}

function expectSafeText(text: string): void {
  expect(FORBIDDEN_CHARS.test(text.replaceAll('\n', ''))).toBe(false);
  expect(text).not.toContain(SECRET_VALUE);
  expect(text).not.toContain('zone_picker_'.repeat(20));
}

describe('weekly digest data', () => {
  it('compares the week with the four before, per platform and step', async () => {
    const [digest] = await loadDigests(runtime(testMain()), WEEK);
    const [monthly] = digest!.flows;
    const conversion = Object.fromEntries(monthly!.conversion.map((c) => [c.platform, c]));
    // web: 0.85^4 every day.
    expect(conversion.web!.week.rate).toBeCloseTo(Math.round(1000 * 0.85 ** 4) / 1000, 6);
    expect(conversion.web!.baseline.rate).toBeCloseTo(Math.round(1000 * 0.85 ** 4) / 1000, 6);
    // android: 5 of 7 days of the week at 0.55/0.85 of normal from the rider step on.
    const low = Math.round(1000 * 0.85 ** 4 * (0.55 / 0.85));
    expect(conversion.android!.week.completed).toBe(2 * Math.round(1000 * 0.85 ** 4) + 5 * low);
    expect(conversion.android!.week.entered).toBe(7000);
    expect(conversion.android!.baseline.entered).toBe(28_000);
    expect(monthly!.weekly.filter((w) => w.platform === 'ios').map((w) => w.week)).toEqual(['2026-10-19', '2026-10-26', '2026-11-02', '2026-11-09', '2026-11-16']);
    expect(monthly!.dropOff.map((d) => d.step)).toEqual(['intro', 'zone', 'rider', 'review', 'done']);
    expect(monthly!.opened).toHaveLength(4);
    expect(monthly!.resolved.map((i) => i.incident.openedDay)).toEqual(['2026-11-16']);
    expect(monthly!.schemaChanges.map((c) => [c.subject.endsWith('.fare_zone'), c.message === null])).toEqual([
      [true, false],
      [false, true],
    ]);
    const noise = Object.fromEntries(monthly!.noise.map((n) => [n.check, n]));
    expect(noise.volume).toMatchObject({ raised: 6, muted: 5, incidents: 3, oneDay: 1 });
    expect(noise.schema).toMatchObject({ raised: 10, muted: 0, incidents: 2, oneDay: 0 });
  });

  it('defaults to the last full week judged', async () => {
    expect(await defaultWeek(runtime(testMain()), new Date('2027-01-01T00:00:00Z'))).toBe(WEEK);
    expect(weekStart('2026-11-22')).toBe(WEEK);
    expect(weekStart('2026-11-16')).toBe(WEEK);
  });
});

describe('weekly digest by e-mail', () => {
  let server: SMTPServer;
  const received: Array<{ raw: Buffer; envelope: SMTPServerEnvelope }> = [];
  let smtpUrl: string;

  beforeAll(async () => {
    server = new SMTPServer({
      authOptional: true,
      disabledCommands: ['STARTTLS'],
      logger: false,
      onData(stream, session, callback) {
        const chunks: Buffer[] = [];
        stream.on('data', (chunk: Buffer) => chunks.push(chunk));
        stream.on('end', () => {
          received.push({ raw: Buffer.concat(chunks), envelope: structuredClone(session.envelope) });
          callback();
        });
      },
    });
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()));
    smtpUrl = `smtp://127.0.0.1:${(server.server.address() as AddressInfo).port}`;
  });
  afterAll(async () => {
    await new Promise<void>((resolve) => server.close(() => resolve()));
  });

  it('delivers one message per owner with both parts, inline charts by cid and every hostile string escaped', async () => {
    const main = testMain({ delivery: { email: { smtp_url: `\${${SMTP_ENV}}`, from: 'plumbline <plumbline@metropass.example>' } } });
    const rt = runtime(main);
    const built = await buildDigests(rt, { week: '2026-11-19' });
    const outcomes = await sendDigests(rt, built, { env: { [SMTP_ENV]: smtpUrl } });
    expect(outcomes).toEqual([{ owner: OWNER, status: 'sent' }]);
    expect(received).toHaveLength(1);
    const mail: ParsedMail = await simpleParser(received[0]!.raw, { keepCidLinks: true });
    onTestFailed(() => console.log('received message:\n', received[0]!.raw.toString('utf8').slice(0, 4000)));

    expect(mail.subject).toBe(`plumbline weekly digest: ${OWNER}, 2026-11-16 to 2026-11-22`);
    expect((mail.to as AddressObject).value.map((a) => a.address)).toEqual(['growth-analytics@metropass.example', 'pass-pm@metropass.example']);
    expect(received[0]!.envelope.rcptTo.map((r) => r.address)).toEqual(['growth-analytics@metropass.example', 'pass-pm@metropass.example']);
    expect(mail.from?.value[0]?.address).toBe('plumbline@metropass.example');
    expect(mail.messageId).toBe(`<digest.${WEEK}.${OWNER}@metropass.example>`);

    const html = mail.html as string;
    expect(typeof html).toBe('string');
    expect(mail.text).toContain('End-to-end conversion');
    expect(mail.text).toContain('Incidents opened (4)');
    // Severities and resolutions carry the same marks as chat and pages (service/present/marks.ts), in both parts.
    expect(html).toMatch(/<strong style="color:#[0-9a-f]{6}">(page ▮▮▮|warn ▮▮▯|note ▮▯▯)<\/strong>/);
    expect(html).toContain('resolved ▯▯▯ 2026-11-18');
    expect(mail.text).toMatch(/^ {2}(page ▮▮▮|warn ▮▮▯|note ▮▯▯) /m);
    expect(mail.text).toContain('resolved ▯▯▯ 2026-11-18');

    // One weekly conversion chart plus one per opened incident, each a PNG attached inline and referenced by cid.
    const images = mail.attachments.filter((a) => a.contentType === 'image/png');
    expect(images).toHaveLength(5);
    for (const image of images) {
      expect(image.contentDisposition).toBe('inline');
      expect(image.content.subarray(0, 8)).toEqual(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]));
      expect(html).toContain(`src="cid:${image.cid}"`);
    }
    expect([...html.matchAll(/src="cid:([^"]+)"/g)].map((m) => m[1]).sort()).toEqual(images.map((i) => i.cid).sort());
    expect(html).not.toMatch(/<svg|data:image/);

    expectSafeHtml(html);
    expectSafeText(mail.text ?? '');
    // The values of a key with few distinct values are shown, truncated and escaped.
    expect(html).toContain('&lt;https:\u2060//evil.example/renew|Renew your Metro Pass&gt;');
    expect(html).not.toContain('muted web review dip');
  });

  it('sends a week once per owner unless asked again, with the same Message-ID', async () => {
    const rt = runtime(testMain({ delivery: { email: { smtp_url: `\${${SMTP_ENV}}`, from: 'plumbline <plumbline@metropass.example>' } } }));
    const built = await buildDigests(rt, { week: WEEK });
    const before = received.length;
    expect(await sendDigests(rt, built, { env: { [SMTP_ENV]: smtpUrl } })).toEqual([{ owner: OWNER, status: 'already_sent' }]);
    expect(received.length).toBe(before);
    expect(await sendDigests(rt, built, { env: { [SMTP_ENV]: smtpUrl }, again: true })).toEqual([{ owner: OWNER, status: 'sent' }]);
    const again = await simpleParser(received[received.length - 1]!.raw);
    expect(again.messageId).toBe(`<digest.${WEEK}.${OWNER}@metropass.example>`);
  });

  it('hides every parameter value when hide_values is set', async () => {
    const [shown] = await buildDigests(runtime(testMain()), { week: WEEK });
    expect(shown!.mail.html).toContain('new fare_zone value');
    const [digest] = await buildDigests(runtime(testMain({ delivery: { hide_values: true } })), { week: WEEK });
    for (const part of [digest!.mail.html, digest!.mail.text]) {
      expect(part).not.toContain('new fare_zone value');
      expect(part).not.toContain('new value');
      expect(part).toContain('.fare_zone on ios 5.2.0: app release');
    }
    expect(digest!.mail.html).toContain('Parameter values are hidden by configuration.');
  });

  it('writes .eml and .html files when no SMTP server is configured', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-digest-'));
    try {
      const rt = runtime(testMain({ delivery: { outbox_dir: dir } }));
      const outcomes = await sendDigests(rt, await buildDigests(rt, { week: WEEK }), { env: {} });
      expect(outcomes[0]).toMatchObject({ owner: OWNER, status: 'written' });
      expect((await readdir(join(dir, 'digest'))).sort()).toEqual([`${WEEK}-${OWNER}.eml`, `${WEEK}-${OWNER}.html`]);
      const eml = await simpleParser(await readFile(join(dir, 'digest', `${WEEK}-${OWNER}.eml`)), { keepCidLinks: true });
      expect(eml.attachments.filter((a) => a.contentType === 'image/png')).toHaveLength(5);
      expectSafeHtml(eml.html as string);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('writes a browser preview with the charts embedded', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-preview-'));
    try {
      const result = await writeDigest(runtime(testMain()), { outDir: dir });
      expect(result.week).toBe(WEEK);
      expect(result.html).toBe(join(dir, 'digest.html'));
      expect(result.eml).toEqual([join(dir, `digest-${WEEK}-${OWNER}.eml`)]);
      const html = await readFile(result.html, 'utf8');
      expect(html.match(/src="data:image\/png;base64,/g)).toHaveLength(5);
      expect(html).not.toContain('cid:');
      expectSafeHtml(html);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
});
