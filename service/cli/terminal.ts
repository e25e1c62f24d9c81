/**
 * Command output on a terminal carries event names and parameter values from
 * apps. Control characters in them could move the cursor, recolour or clear
 * the screen or retitle the window (ECMA-48 escape and control sequences,
 * introduced by ESC U+001B or the 8-bit CSI U+009B), or reorder the text
 * around them (bidirectional controls, Unicode TR 36 section 2.1). They are
 * removed from text output; line breaks and tabs of our own layout stay.
 */
// eslint-disable-next-line no-control-regex
const CONTROLS = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;
// JSON.stringify escapes C0 controls but leaves C1 controls and the bidirectional ones raw.
const RAW_IN_JSON = /[\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

/** `text` safe to print: controls removed, or with `json`, written as `\uXXXX` escapes so the JSON keeps its meaning. */
export function terminalSafe(text: string, options: { json?: boolean } = {}): string {
  if (options.json) return text.replace(RAW_IN_JSON, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
  return text.replace(CONTROLS, '');
}

/** Prints command output (stdout) through `terminalSafe`. */
export function printOut(text: string, options: { json?: boolean } = {}): void {
  console.log(terminalSafe(text, options));
}
