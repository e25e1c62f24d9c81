/**
 * The weekly digest per owner: built from the state tables, rendered as an
 * HTML part and a plain-text part with the charts as inline PNG attachments
 * (`cid:` references), then sent through `delivery.email.smtp_url` or, with no
 * SMTP server configured, written as `.eml` and `.html` files.
 *
 * A digest is sent once per (week, owner): `digest_sends` records `sending`
 * before the SMTP transaction and `sent` after it, and the Message-ID is
 * derived from (week, owner), so a resend after a crash in between carries
 * the same id (mail systems that deduplicate by Message-ID show it once).
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import nodemailer from 'nodemailer';
import type Mail from 'nodemailer/lib/mailer/index.js';
import type { Day } from '../../checks/types.js';
import { renderPng } from '../charts/index.js';
import { resolveReference } from '../config/load.js';
import { quoteIdent } from '../db/sql.js';
import type { Logger } from '../log.js';
import { defaultWeek, loadDigests, weekStart, type Digest, type DigestRuntime } from './digest-data.js';
import { digestCharts, htmlDocument, renderDigest, type RenderedDigest } from './digest-render.js';
import { escapeHtml } from '../present/text.js';

export interface BuiltDigest {
  digest: Digest;
  /** Rendered for e-mail: images as `cid:` references. */
  mail: RenderedDigest;
  /** The HTML body with images as data URIs, for a browser. */
  previewBody: string;
  attachments: Array<{ cid: string; filename: string; content: Buffer }>;
}

/** Builds the digests of `week` (any day of it; the week starts on Monday), for every owner or the given ones. */
export async function buildDigests(rt: DigestRuntime, options: { week: Day; owners?: string[] }): Promise<BuiltDigest[]> {
  const digests = await loadDigests(rt, weekStart(options.week), options.owners);
  const built: BuiltDigest[] = [];
  for (const digest of digests) {
    const attachments = [];
    for (const { cid, filename, chart } of digestCharts(digest)) attachments.push({ cid, filename, content: await renderPng(chart) });
    const mail = renderDigest(digest, new Map(attachments.map((a) => [a.cid, `cid:${a.cid}`])));
    const preview = renderDigest(digest, new Map(attachments.map((a) => [a.cid, `data:image/png;base64,${a.content.toString('base64')}`])));
    built.push({ digest, mail, previewBody: preview.body, attachments });
  }
  return built;
}

/** One browser page showing each digest with its envelope. */
export function previewDocument(built: readonly BuiltDigest[]): string {
  const sections = built.map(
    ({ digest, mail, previewBody }) =>
      `<p style="max-width:680px;margin:24px auto 6px;font-size:12px;color:#52606d">To: ${escapeHtml(digest.recipients.join(', ') || '(no address configured)')}<br>Subject: ${escapeHtml(mail.subject)}</p>\n${previewBody}`,
  );
  return htmlDocument('plumbline weekly digest preview', sections.length > 0 ? sections.join('\n') : '<p>No flows are configured, so there is no digest.</p>');
}

export async function writePreview(built: readonly BuiltDigest[], file: string): Promise<string> {
  const path = resolve(file);
  await mkdir(dirname(path), { recursive: true });
  await writeFile(path, previewDocument(built));
  return path;
}

/** The domain of the From address, for Message-IDs. */
function senderDomain(from: string): string {
  return /@([A-Za-z0-9.-]+)>?\s*$/.exec(from)?.[1] ?? 'plumbline.invalid';
}

export function mailOptions(built: BuiltDigest, from: string): Mail.Options {
  const { digest, mail } = built;
  return {
    from,
    to: digest.recipients,
    subject: mail.subject,
    text: mail.text,
    html: mail.html,
    messageId: `<digest.${digest.week}.${digest.owner}@${senderDomain(from)}>`,
    attachments: built.attachments.map(({ cid, filename, content }) => ({ cid, filename, content, contentType: 'image/png', contentDisposition: 'inline' as const })),
  };
}

/** The message as an RFC 5322 file (what would go over SMTP). */
export async function toEml(built: BuiltDigest, from: string): Promise<Buffer> {
  const transport = nodemailer.createTransport({ streamTransport: true, buffer: true, newline: 'unix' });
  const info = await transport.sendMail(mailOptions(built, from));
  return info.message as Buffer;
}

export interface SendOutcome {
  owner: string;
  status: 'sent' | 'written' | 'already_sent' | 'no_recipients' | 'failed';
  /** Files written when no SMTP server is configured. */
  files?: string[];
  error?: string;
}

export interface SendRuntime extends DigestRuntime {
  log: Logger;
}

/**
 * Sends each digest through the configured SMTP server, once per (week,
 * owner) unless `again`; without a server, writes `<week>-<owner>.eml` and
 * `.html` under `delivery.outbox_dir`/digest instead.
 */
export async function sendDigests(rt: SendRuntime, built: readonly BuiltDigest[], options: { env?: NodeJS.ProcessEnv; again?: boolean; now?: () => Date } = {}): Promise<SendOutcome[]> {
  const { email, outbox_dir } = rt.config.main.delivery;
  const now = options.now ?? (() => new Date());
  const smtpUrl = resolveReference(email.smtp_url, options.env ?? process.env);
  const outcomes: SendOutcome[] = [];
  if (smtpUrl === undefined) {
    const folder = resolve(outbox_dir, 'digest');
    await mkdir(folder, { recursive: true });
    for (const item of built) {
      const base = join(folder, `${item.digest.week}-${item.digest.owner}`);
      await writeFile(`${base}.eml`, await toEml(item, email.from));
      await writeFile(`${base}.html`, previewDocument([item]));
      outcomes.push({ owner: item.digest.owner, status: 'written', files: [`${base}.eml`, `${base}.html`] });
    }
    return outcomes;
  }
  const transport = nodemailer.createTransport(smtpUrl);
  const s = quoteIdent(rt.stateSchema);
  try {
    for (const item of built) {
      const { owner, week, recipients } = item.digest;
      if (recipients.length === 0) {
        outcomes.push({ owner, status: 'no_recipients' });
        continue;
      }
      const { rows } = await rt.state.query<{ state: string }>({ text: `select state from ${s}.digest_sends where week = $1 and owner = $2`, values: [week, owner] });
      if (rows[0]?.state === 'sent' && !options.again) {
        outcomes.push({ owner, status: 'already_sent' });
        continue;
      }
      const message = mailOptions(item, email.from);
      await rt.state.query({
        text: `insert into ${s}.digest_sends (week, owner, message_id, recipients, state, updated_at) values ($1, $2, $3, $4, 'sending', $5)
          on conflict (week, owner) do update set state = 'sending', recipients = excluded.recipients, updated_at = excluded.updated_at`,
        values: [week, owner, message.messageId, recipients, now()],
      });
      try {
        await transport.sendMail(message);
      } catch (error) {
        rt.log.error({ err: error, owner, week }, 'weekly digest not sent');
        outcomes.push({ owner, status: 'failed', error: (error as Error).message });
        continue;
      }
      await rt.state.query({ text: `update ${s}.digest_sends set state = 'sent', updated_at = $3 where week = $1 and owner = $2`, values: [week, owner, now()] });
      rt.log.info({ owner, week, recipients: recipients.length }, 'weekly digest sent');
      outcomes.push({ owner, status: 'sent' });
    }
  } finally {
    transport.close();
  }
  return outcomes;
}

/**
 * For the demo: writes `digest.html` (every owner's digest, charts embedded,
 * opens in a browser) and one `.eml` per owner into `outDir`; returns the paths.
 */
export async function writeDigest(rt: DigestRuntime, options: { outDir: string; week?: Day; now?: Date }): Promise<{ week: Day; html: string; eml: string[] }> {
  const week = options.week !== undefined ? weekStart(options.week) : await defaultWeek(rt, options.now ?? new Date());
  const built = await buildDigests(rt, { week });
  const html = await writePreview(built, join(options.outDir, 'digest.html'));
  const eml: string[] = [];
  for (const item of built) {
    const file = resolve(options.outDir, `digest-${week}-${item.digest.owner}.eml`);
    await writeFile(file, await toEml(item, rt.config.main.delivery.email.from));
    eml.push(file);
  }
  return { week, html, eml };
}
