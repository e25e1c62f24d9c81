/**
 * The chat message for an incident event. What a message says (`ChatInput`)
 * is the same for every chat service; a `ChatFormat` turns it into the JSON
 * body one service's incoming webhook accepts. Supported: `slack`, a Slack
 * incoming webhook with Block Kit sections (the default). A second format is
 * one more `ChatFormat` in `CHAT_FORMATS` and its id in `CHAT_FORMAT_IDS`
 * (`service/config/schema.ts`), which `delivery.chat.format` chooses from.
 *
 * In the `slack` format, client text goes through `chatText` (cleaned,
 * clipped, escaped); the owners' mentions come from reviewed config and are
 * the only mentions a message can carry. Link unfurling is off so no data-driven
 * address gets a preview.
 */
import type { IncomingWebhookSendArguments } from '@slack/webhook';
import type { Severity } from '../../checks/types.js';
import type { ChatFormatId } from '../config/schema.js';
import type { Incident, IncidentEvent } from '../incidents/types.js';
import { RESOLVED_MARK, SEVERITY_MARK, severityLabel } from '../present/marks.js';
import type { IncidentPresentation } from '../present/present.js';
import { chatText, cleanText, escapeChat, fitChat } from '../present/text.js';

/** The JSON body posted to the chat webhook; `text` is the one-line fallback every format carries. */
export interface ChatPayload {
  text: string;
}

/** One chat service's message layout. */
export interface ChatFormat<Payload extends ChatPayload = ChatPayload> {
  id: ChatFormatId;
  render(input: ChatInput): Payload;
  renderBackfill(input: BackfillInput): Payload;
}

/** The one message of a backfill judged without chat messages (delivery/backfill.ts). */
export interface BackfillInput {
  from: string;
  to: string;
  flows: string[];
  /** Incidents above note the range recorded, muted ones left out. */
  recorded: number;
  /** Those still open, most severe first, each with its page. */
  open: Array<{ incident: Incident; url: string }>;
  /** The overview page, listing every incident. */
  overviewUrl: string;
}

export type SlackMessage = IncomingWebhookSendArguments & { text: string; blocks: NonNullable<IncomingWebhookSendArguments['blocks']> };

/** Section text is limited to 3,000 characters and a field to 2,000 (Slack Block Kit reference, "Section block"). */
const SECTION_MAX = 3000;
const FIELD_MAX = 2000;
/** Limits for client strings, before escaping. */
const HEADLINE_MAX = 200;
const SENTENCE_MAX = 600;
const SYMPTOM_MAX = 300;

/** A configured mention such as `<!subteam^S0GROWTH>` or `<@U024BE7LH>`; anything else is shown as text. */
const MENTION = /^<[@!#][^<>\s]*>$/;

export interface ChatInput {
  event: IncidentEvent;
  incident: Incident;
  presentation: IncidentPresentation;
  /** Each owner's configured mention, if any. */
  mentions: Record<string, string | undefined>;
  /** The incident page. */
  url: string;
  /** For `severity_raised`: the severity announced before. */
  previousSeverity?: Severity | null;
  resolveAfterDays: number;
}

function section(text: string, max = SECTION_MAX) {
  return { type: 'section' as const, text: { type: 'mrkdwn' as const, text: fitChat(text, max) } };
}

function ownerText(owner: string, mention: string | undefined): string {
  if (mention !== undefined && MENTION.test(mention)) return mention;
  return chatText(mention ?? owner, 80);
}

/** "Owner: x" or "Owners: x, y" (a data delay holds back flows of several owners). */
function ownersLine(owners: readonly string[], show: (owner: string) => string): string {
  return `Owner${owners.length === 1 ? '' : 's'}: ${owners.map(show).join(', ')}`;
}

/** Link text and address for mrkdwn `<url|text>`: the address is ours, `|` and `>` would end it early. */
function link(url: string, text: string): string {
  return `<${url.replace(/\|/g, '%7C').replace(/>/g, '%3E').replace(/</g, '%3C')}|${escapeChat(text)}>`;
}

function renderSlack(input: ChatInput): SlackMessage {
  const { event, incident, presentation: p } = input;
  const headline = chatText(p.headline, HEADLINE_MAX);
  const flow = chatText(incident.flows.join(', '), 160);
  const where = chatText(p.where, 120);
  const blocks: SlackMessage['blocks'] = [];
  let fallback: string;
  if (event === 'resolved') {
    const lasted = `${incident.openedDay} to ${incident.lastSeenDay}, seen on ${incident.daysSeen} judged day${incident.daysSeen === 1 ? '' : 's'}`;
    const why =
      incident.resolution === 'late_data'
        ? `Late rows restated ${incident.resolvedDay}; judged again with them, the data no longer shows it: it was data arriving late (data delay), not a change.`
        : incident.resolution === 'withdrawn'
          ? `Judging ${incident.resolvedDay} again no longer shows it.`
          : `Not seen on ${input.resolveAfterDays} judged day${input.resolveAfterDays === 1 ? '' : 's'} after ${incident.lastSeenDay}.`;
    fallback = `resolved ${RESOLVED_MARK}: ${headline} (${flow}, ${where})`;
    blocks.push(section(`*resolved* ${RESOLVED_MARK} · ${flow} · ${where}\n*${headline}*`));
    blocks.push(section(`${why} It lasted ${lasted}. ${ownersLine(incident.owners, (owner) => chatText(owner, 80))}.`));
  } else {
    const what =
      event === 'opened'
        ? 'opened'
        : event === 'still_held_back'
          ? `still held back, ${incident.daysSeen} days`
          : `raised${input.previousSeverity ? ` from ${input.previousSeverity}` : ''}`;
    fallback = `${severityLabel(incident.severity)} ${what}: ${headline} (${flow}, ${where})`;
    blocks.push(section(`*${incident.severity}* ${SEVERITY_MARK[incident.severity]} · ${what} · ${flow} · ${where}\n*${headline}*`));
    // Only a page calls someone: a warn names its owners without notifying them.
    const show = incident.severity === 'page' ? (owner: string) => ownerText(owner, input.mentions[owner]) : (owner: string) => chatText(owner, 80);
    blocks.push(section(ownersLine(incident.owners, show)));
    const fields = [
      `*Since*\n${incident.since} (${incident.daysSeen} judged day${incident.daysSeen === 1 ? '' : 's'})`,
      `*Where*\n${where}`,
    ];
    if (p.observed !== null && p.expected !== null) {
      fields.push(`*Observed* (${chatText(p.metric ?? '', 60)})\n${chatText(p.observed, 60)}`, `*Expected*\n${chatText(p.expected, 120)}`);
    }
    blocks.push({ type: 'section', fields: fields.map((text) => ({ type: 'mrkdwn' as const, text: fitChat(text, FIELD_MAX) })) });
    const evidence = p.cause.evidence.map(({ key, value }) => `${chatText(key, 60)}: ${chatText(value, 60)}`).join(' · ');
    blocks.push(
      section(
        `*Likely cause:* ${chatText(p.cause.label, 60)} (confidence ${p.cause.confidence})\n${chatText(p.cause.sentence, SENTENCE_MAX)}` +
          (evidence ? `\nEvidence: ${evidence}` : ''),
      ),
    );
    if (p.symptoms.length > 0) {
      blocks.push(section(p.symptoms.map((s) => `• ${chatText(s.check, 40)}: ${chatText(s.text, SYMPTOM_MAX)}`).join('\n')));
    }
  }
  blocks.push(section(link(input.url, `Open incident ${incident.id}`)));
  return { text: fitChat(fallback, 300), blocks, unfurl_links: false, unfurl_media: false };
}

/** Open incidents listed by name in a backfill's summary; the overview page has the rest. */
const BACKFILL_LISTED = 20;

function renderSlackBackfill(input: BackfillInput): SlackMessage {
  const range = `${input.from}..${input.to}`;
  const counts = `${input.recorded} incident${input.recorded === 1 ? '' : 's'}, ${input.open.length} still open`;
  const flows = chatText(input.flows.join(', '), 160);
  const blocks: SlackMessage['blocks'] = [
    section(
      `*backfill ${range}* · ${flows}\n${counts}. Days older than the catch-up window were judged without a message each; ` +
        (input.open.length > 0 ? 'what is still open follows, one message per incident.' : 'nothing is open.'),
    ),
  ];
  if (input.open.length > 0) {
    const lines = input.open
      .slice(0, BACKFILL_LISTED)
      .map(({ incident, url }) => `• ${severityLabel(incident.severity)} ${link(url, cleanText(incident.title, HEADLINE_MAX))} · ${chatText(incident.flows.join(', '), 160)} · since ${incident.since}`);
    if (input.open.length > BACKFILL_LISTED) lines.push(`and ${input.open.length - BACKFILL_LISTED} more`);
    blocks.push(section(lines.join('\n')));
  }
  blocks.push(section(link(input.overviewUrl, 'Every incident of the backfill')));
  return { text: fitChat(`backfill ${range}: ${counts}`, 300), blocks, unfurl_links: false, unfurl_media: false };
}

/** A Slack incoming webhook, Block Kit sections (Slack API reference, "Sending messages using incoming webhooks"). */
export const slackFormat: ChatFormat<SlackMessage> = { id: 'slack', render: renderSlack, renderBackfill: renderSlackBackfill };

/** Every supported format by id: the type demands one for each id `delivery.chat.format` accepts. */
export const CHAT_FORMATS: Record<ChatFormatId, ChatFormat> = { slack: slackFormat };

/** One plain line for the CLI and the status page. */
export function summaryLine(event: IncidentEvent, incident: Incident, presentation: IncidentPresentation): string {
  return cleanText(`${event} ${incident.id} [${incident.severity}] ${presentation.headline} (${presentation.where})`, 300);
}
