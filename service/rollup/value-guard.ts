/**
 * The value guard: parameter values are profiled (a key's most frequent
 * values, for keys with few distinct values) and may then be shown on pages,
 * in chat and in the digest. Before a profile is stored, values that look
 * like personal data or secrets are replaced by a marker naming what was
 * there, and values of keys listed in `delivery.hide_keys` are not kept at
 * all. The patterns are rules of thumb (common practice), tuned to miss
 * little personal data at the price of masking some harmless values:
 *
 * - e-mail: `something@domain.tld` anywhere in the value;
 * - phone: `+` and 8 to 15 digits with optional single spaces, dots, dashes
 *   or brackets (at most two) between them (ITU-T E.164 numbers have at most 15 digits),
 *   or the grouped national form `(555) 013-2671` / `555-013-2671`;
 * - number: a run of 9 or more digits (card, account, customer or phone
 *   numbers written without separators, epoch timestamps);
 * - token: a run of 20 or more letters, digits and `_-+/=` with at least 4
 *   letters and 4 digits (API keys, session ids, UUIDs, JWT parts).
 *
 * Dates (2026-11-18), versions (7.4.0), amounts (4850) and plain words pass.
 */
import type { ParamProfileRow } from '../warehouse/engine.js';

export const VALUE_MARKERS = { email: '[e-mail]', phone: '[phone]', number: '[number]', token: '[token]' } as const;
export type MaskedKind = keyof typeof VALUE_MARKERS;

const EMAIL = /[^\s@<>()[\]",;:]+@[^\s@<>()[\]",;:]+\.[a-z]{2,}/i;
const PHONE_INTERNATIONAL = /\+\d(?:[\s.()-]{0,2}\d){7,14}(?!\d)/;
const PHONE_GROUPED = /(?<!\d)(?:\(\d{3}\)\s?|\d{3}[\s.-])\d{3}[\s.-]\d{4}(?!\d)/;
const LONG_DIGITS = /\d{9,}/;
const TOKEN_RUN = /[A-Za-z0-9_+/=-]{20,}/g;

/** What a value looks like, if it looks like personal data or a secret. */
export function maskedKind(value: string): MaskedKind | undefined {
  if (EMAIL.test(value)) return 'email';
  if (PHONE_INTERNATIONAL.test(value) || PHONE_GROUPED.test(value)) return 'phone';
  for (const run of value.match(TOKEN_RUN) ?? []) {
    const letters = run.replace(/[^A-Za-z]/g, '').length;
    const digits = run.replace(/\D/g, '').length;
    if (letters >= 4 && digits >= 4) return 'token';
  }
  if (LONG_DIGITS.test(value)) return 'number';
  return undefined;
}

/** The value as it may be stored: itself, or the marker of what it looked like. */
export function guardValue(value: string): string {
  const kind = maskedKind(value);
  return kind === undefined ? value : VALUE_MARKERS[kind];
}

/** Whether `delivery.hide_keys` lists this key: as `key` (any event) or as `event.key`. */
export function isHiddenKey(hiddenKeys: readonly string[], event: string, key: string): boolean {
  return hiddenKeys.includes(key) || hiddenKeys.includes(`${event}.${key}`);
}

/**
 * A day's parameter profiles as they may be stored: top values guarded (values
 * masked alike are merged, most frequent first), and none kept for hidden keys.
 * Counts (events, distinct values, numeric ranges) are kept: they name no one.
 */
export function guardProfiles(rows: readonly ParamProfileRow[], hiddenKeys: readonly string[]): ParamProfileRow[] {
  return rows.map((row) => {
    if (row.topValues.length === 0) return row;
    if (isHiddenKey(hiddenKeys, row.event, row.key)) return { ...row, topValues: [] };
    const merged = new Map<string, number>();
    for (const top of row.topValues) {
      const value = guardValue(top.value);
      merged.set(value, (merged.get(value) ?? 0) + top.events);
    }
    const topValues = [...merged].map(([value, events]) => ({ value, events })).sort((a, b) => b.events - a.events || (a.value < b.value ? -1 : a.value > b.value ? 1 : 0));
    return { ...row, topValues };
  });
}
