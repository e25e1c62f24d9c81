import { rm } from 'node:fs/promises';
import { join } from 'node:path';
import { writeDigest } from '../../delivery/digest.js';
import { drainOutbox } from '../../delivery/sender.js';
import { DEMO_DIR, prepareDemo } from '../../demo/prepare.js';
import { replayClock } from '../../pipeline/run-day.js';
import type { Runtime } from '../../runtime.js';
import { EXIT } from '../exit-codes.js';
import { formatSummary, loadSummary } from '../summary.js';
import { printOut } from '../terminal.js';

export async function demoCommand(rt: Runtime, options: { json?: boolean; days: number; findings?: boolean }): Promise<number> {
  const demo = await prepareDemo(rt, { quiet: options.json ?? false });
  // No webhook or SMTP in the demo: chat payloads and the digest become files. Old payloads would mislead.
  await rm(join(rt.config.main.delivery.outbox_dir, 'chat'), { recursive: true, force: true });
  const chat = await drainOutbox(rt);
  const digest = await writeDigest(rt, { outDir: DEMO_DIR, now: replayClock(rt)(demo.to) });
  const summary = await loadSummary(rt, demo.judgedFrom, demo.to);
  const delivery = { chatMessages: chat.sent, chatFolder: chat.folder ?? null, digestWeek: digest.week, digestHtml: digest.html, digestEml: digest.eml };
  if (options.json) {
    printOut(JSON.stringify({ demo, delivery, ...summary }, null, 2), { json: true });
  } else {
    printOut(formatSummary(rt.flows, summary, { pictureDays: options.days, allFindings: options.findings ?? false }));
    console.log(`\nDemo: ${demo.events.toLocaleString('en-US')} events from ${demo.from} to ${demo.to}, judged from ${demo.judgedFrom}, in ${(demo.millis / 1000).toFixed(1)} s.`);
    console.log(`Ground truth of the injected incidents: ${demo.groundTruthPath}`);
    console.log(`Chat messages (no webhook configured): ${chat.sent} written to ${chat.folder ?? 'the webhook'}`);
    console.log(`Weekly digest (week of ${digest.week}): ${digest.html}`);
  }
  return EXIT.ok;
}
