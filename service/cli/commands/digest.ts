import { buildDigests, sendDigests, writePreview } from '../../delivery/digest.js';
import { defaultWeek, weekStart } from '../../delivery/digest-data.js';
import type { Runtime } from '../../runtime.js';
import { EXIT, ExitError } from '../exit-codes.js';

export interface DigestCommandOptions {
  week?: string;
  owner?: string[];
  out?: string;
  send?: boolean;
  again?: boolean;
}

/**
 * `plumbline digest`: previews (--out FILE.html) and/or sends (--send) the
 * weekly digest. Exit codes: 0 done; 4 a digest could not be sent (the SMTP
 * error is printed and logged); 64 wrong usage.
 */
export async function digestCommand(rt: Runtime, options: DigestCommandOptions): Promise<number> {
  if (options.week !== undefined && !/^\d{4}-\d{2}-\d{2}$/.test(options.week)) throw new ExitError(EXIT.usage, '--week is a day of the week, YYYY-MM-DD');
  if (!options.out && !options.send) throw new ExitError(EXIT.usage, 'give --out FILE.html to preview the digest, --send to send it, or both');
  const known = [...new Set(rt.flows.map((flow) => flow.owner))].sort();
  for (const owner of options.owner ?? []) {
    if (!known.includes(owner)) throw new ExitError(EXIT.usage, `no flow is owned by "${owner}" (owners of flows: ${known.join(', ') || 'none'})`);
  }
  const week = options.week !== undefined ? weekStart(options.week) : await defaultWeek(rt, new Date());
  const built = await buildDigests(rt, { week, ...(options.owner ? { owners: options.owner } : {}) });
  if (options.out) {
    const path = await writePreview(built, options.out);
    console.log(`digest preview for the week of ${week} (${built.length} owner${built.length === 1 ? '' : 's'}): ${path}`);
  }
  let failed = false;
  if (options.send) {
    for (const outcome of await sendDigests(rt, built, { again: options.again ?? false })) {
      const recipients = built.find((b) => b.digest.owner === outcome.owner)?.digest.recipients.join(', ');
      switch (outcome.status) {
        case 'sent':
          console.log(`${outcome.owner}: sent to ${recipients}`);
          break;
        case 'written':
          console.log(`${outcome.owner}: no SMTP server configured (delivery.email.smtp_url), written to ${outcome.files!.join(' and ')}`);
          break;
        case 'already_sent':
          console.log(`${outcome.owner}: already sent for the week of ${week} (--again sends it once more)`);
          break;
        case 'no_recipients':
          console.log(`${outcome.owner}: not sent, no address under owners.${outcome.owner}.email`);
          break;
        case 'failed':
          failed = true;
          console.error(`${outcome.owner}: not sent: ${outcome.error}`);
          break;
      }
    }
  }
  return failed ? EXIT.failed : EXIT.ok;
}
