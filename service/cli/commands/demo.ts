import { prepareDemo } from '../../demo/prepare.js';
import type { Runtime } from '../../runtime.js';
import { EXIT } from '../exit-codes.js';
import { formatSummary, loadSummary } from '../summary.js';

export async function demoCommand(rt: Runtime, options: { json?: boolean; days: number }): Promise<number> {
  const demo = await prepareDemo(rt, { quiet: options.json ?? false });
  const summary = await loadSummary(rt, demo.judgedFrom, demo.to);
  if (options.json) {
    console.log(JSON.stringify({ demo, ...summary }, null, 2));
  } else {
    console.log(formatSummary(rt, summary, options.days));
    console.log(`\nDemo: ${demo.events.toLocaleString('en-US')} events from ${demo.from} to ${demo.to}, judged from ${demo.judgedFrom}, in ${(demo.millis / 1000).toFixed(1)} s.`);
    console.log(`Ground truth of the injected incidents: ${demo.groundTruthPath}`);
  }
  return EXIT.ok;
}
