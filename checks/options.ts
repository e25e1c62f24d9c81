/**
 * Building blocks for check option schemas, shared with the config loader so
 * a duration or a percentage reads the same everywhere.
 */
import { z } from 'zod';
import type { Severity, WithPlatforms } from './types.js';

const DURATION = /^(\d+(?:\.\d+)?)(s|m|h|d)$/;
const SECONDS: Record<string, number> = { s: 1, m: 60, h: 3600, d: 86400 };

/** Parses `90s`, `30m`, `3h`, `2d` into seconds; undefined when malformed. */
export function parseDuration(text: string): number | undefined {
  const match = DURATION.exec(text.trim());
  if (!match) return undefined;
  return Number(match[1]) * SECONDS[match[2]!]!;
}

/** A duration written like `30m`, `3h` or `2d`, as seconds. */
export const duration = () =>
  z
    .string({ error: 'expected a duration such as 30m, 3h or 2d' })
    .regex(DURATION, { message: 'expected a duration such as 30m, 3h or 2d' })
    .transform((text) => parseDuration(text)!);

const PERCENT = 'expected a percentage such as 30% (or a fraction from 0 to 1)';

/** A share written `30%` (or a fraction from 0 to 1), as a fraction. */
export const percent = () =>
  z.union(
    [
      z
        .string()
        .regex(/^\d+(\.\d+)?%$/, { message: 'expected a percentage such as 30%' })
        .transform((text) => Number(text.slice(0, -1)) / 100),
      z.number().min(0, { message: PERCENT }).max(1, { message: PERCENT }),
    ],
    { error: PERCENT },
  );

/** How loudly a finding is delivered: page (mention the owner), warn (chat), note (digest only). */
export const severity = (fallback: Severity) => z.enum(['page', 'warn', 'note']).default(fallback);

/** The options that apply on `platform`: its override when the flow file gives one. */
export function optionsFor<O extends object>(options: WithPlatforms<O>, platform: string): O {
  return (options.per_platform[platform] as O | undefined) ?? options;
}
