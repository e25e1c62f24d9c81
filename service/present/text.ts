/**
 * Making client data safe to show. Event names, step subjects, parameter
 * values and the sentences built from them come from apps and websites, so
 * every renderer passes them through `cleanText` and then its markup's escaper:
 * `escapeChat` for chat mrkdwn, `escapeHtml` for pages and e-mail.
 */

/**
 * Characters removed from client text: C0/C1 controls (a newline could forge a
 * line of our own layout), bidirectional embeddings, overrides and isolates
 * (U+202A-U+202E, U+2066-U+2069) and the directional marks (U+200E, U+200F,
 * U+061C), which can reorder what is displayed around them so that text reads
 * differently from what it is (Unicode TR 36, section 2.1).
 */
// eslint-disable-next-line no-control-regex
const UNSAFE = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;
const WHITESPACE_BREAKS = /[\t\n\r\u2028\u2029]+/g;

const graphemes = new Intl.Segmenter('en', { granularity: 'grapheme' });

/** U+2060 WORD JOINER: invisible and unbreakable, it splits a token without changing how the text looks. */
const JOINER = '\u2060';

/**
 * Strips unsafe characters, folds line breaks into spaces, keeps addresses in
 * client text from being turned into links (chat and mail clients link
 * `scheme://` and `www.` on their own; a joiner after the colon or the `www`
 * stops that while the text reads the same) and clips to `max` UTF-16 units
 * (whole graphemes, ending in an ellipsis).
 */
export function cleanText(text: string, max: number): string {
  const cleaned = text
    .replace(WHITESPACE_BREAKS, ' ')
    .replace(UNSAFE, '')
    .replace(/:\/\//g, `:${JOINER}//`)
    .replace(/\bwww\./gi, (www) => `${www.slice(0, 3)}${JOINER}.`);
  return clip(cleaned, max);
}

/** Clips to at most `max` UTF-16 units without splitting a grapheme (an emoji sequence, a letter with its accents). */
export function clip(text: string, max: number): string {
  if (text.length <= max) return text;
  let out = '';
  for (const { segment } of graphemes.segment(text)) {
    if (out.length + segment.length > max - 1) break;
    out += segment;
  }
  return `${out}…`;
}

/** Escapes the five characters that matter in HTML text and attribute values. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/**
 * Escapes text for chat mrkdwn. The chat markup recognises only `&`, `<` and
 * `>` as control characters and decodes only their three entities (Slack,
 * "Formatting text for app surfaces", section "Escaping text"), so escaping
 * them turns `<!channel>`, `<@U123>`, `<#C123>`, `<!subteam^S1>` and
 * `<https://x|y>` into inert text. Beyond the markup, a bare `@channel`,
 * `@here` or `@name` can still be turned into a mention when a message is
 * posted with name linking, and `#name` into a channel link; a word joiner
 * after `@` and `#` breaks those tokens while the text reads the same.
 */
export function escapeChat(text: string): string {
  return text.replace(/[&<>]/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;' })[c]!).replace(/([@#])(?=[\p{L}\p{N}_])/gu, `$1${JOINER}`);
}

/**
 * Escapes text for Markdown (CommonMark and GitHub Flavored Markdown, as in a
 * pull-request comment): every ASCII punctuation character that can start
 * markup is backslash-escaped (CommonMark 0.31, section 2.4 "Backslash
 * escapes": any ASCII punctuation may be escaped), so text cannot open an
 * image, a link, emphasis, code, a heading or a table cell; `<` and `&` are
 * written as entities, so no HTML tag or entity survives; and a word joiner
 * after `@` and `#` keeps mentions and issue references from being linked.
 */
export function escapeMarkdown(text: string): string {
  return text
    .replace(/[\\`*_{}[\]()#+\-.!|~>"'$%:;=?^]/g, (c) => `\\${c}`)
    .replace(/[&<]/g, (c) => ({ '&': '&amp;', '<': '&lt;' })[c]!)
    .replace(/([@#])(?=[\p{L}\p{N}_])/gu, `$1${JOINER}`);
}

/** Client text for Markdown: cleaned, clipped, escaped. */
export function markdownText(text: string, max: number): string {
  return escapeMarkdown(cleanText(text, max));
}

/**
 * Client text for chat: cleaned (addresses defused: a bare domain may still be
 * linked by the client, but shows its real target, so data can never put
 * link text over a different address), clipped to `max` before escaping, then escaped.
 */
export function chatText(text: string, max: number): string {
  return escapeChat(cleanText(text, max));
}

/** Client text for HTML: cleaned, clipped, escaped, and isolated (`<bdi>`) so right-to-left text cannot reorder its neighbours. */
export function htmlText(text: string, max: number): string {
  return `<bdi>${escapeHtml(cleanText(text, max))}</bdi>`;
}

/**
 * Cuts already escaped chat text to a block's limit without breaking an
 * entity: the cut never lands inside `&amp;`, `&lt;` or `&gt;`.
 */
export function fitChat(escaped: string, max: number): string {
  if (escaped.length <= max) return escaped;
  let cut = max - 1;
  const amp = escaped.lastIndexOf('&', cut);
  if (amp >= 0 && amp > cut - 5 && escaped.indexOf(';', amp) >= cut) cut = amp;
  else if (/[\ud800-\udbff]/.test(escaped[cut - 1] ?? '')) cut -= 1;
  return `${escaped.slice(0, cut)}…`;
}
