/**
 * Strings a client could send as event names or parameter values, aimed at
 * chat markup (broadcast mentions, disguised links), HTML (tags, attribute
 * breakouts), layout (huge strings, line breaks) and display (emoji
 * sequences, right-to-left overrides and marks, controls).
 */
export const HOSTILE: Record<string, string> = {
  channel: '<!channel>',
  here: '<!here> <!everyone>',
  user: '<@U024BE7LH> <#C024BE7LH|general> <!subteam^S0SECRET>',
  link: '<https://x.example|y>',
  phishing: '<https://evil.example/renew|Renew your Metro Pass>',
  bareMention: '@channel @here @everyone look',
  bareUrl: 'see https://evil.example/pass and www.evil.example',
  html: '</td><script>alert(1)</script>',
  attribute: '"><img src=x onerror=alert(1)>',
  entity: '&amp; &lt;b&gt; &#60;',
  long: 'zone_picker_'.repeat(600),
  emoji: '🚇🎫👩‍👩‍👧‍👦🏳️‍🌈'.repeat(300),
  rtlOverride: 'pass\u202Eweiv_\u202C_selected',
  rtlMarks: 'שלום\u200Frider\u200E\u061C\u2067isolated\u2069',
  controls: 'line\nbreak\r\n\tand\u0000nul\u0007bell\u2028sep',
  markup: '*bold* _italic_ ~strike~ `code` ```block```',
};

/** The corpus as it can reach the state tables: PostgreSQL text and jsonb cannot hold NUL, so nothing from the warehouse carries one. */
export const STORABLE_HOSTILE: Record<string, string> = Object.fromEntries(Object.entries(HOSTILE).map(([name, value]) => [name, value.replaceAll('\u0000', '')]));

/** Characters that must never reach a rendered message: controls other than newline, and direction overrides, embeddings, isolates and marks. */
// eslint-disable-next-line no-control-regex
export const FORBIDDEN_CHARS = /[\u0000-\u0009\u000b-\u001f\u007f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029]/;
