import { backtest, loadConfigAtRef, type BacktestResult } from '../../pipeline/backtest.js';
import type { Runtime } from '../../runtime.js';
import { markdownText } from '../../present/text.js';
import { EXIT, ExitError } from '../exit-codes.js';
import { printOut } from '../terminal.js';
import { dayRanges } from '../report.js';

export interface BacktestCommandOptions {
  days: number;
  flow?: string[];
  to?: string;
  against?: string;
  json?: boolean;
}

export async function backtestCommand(rt: Runtime, options: BacktestCommandOptions): Promise<number> {
  if (options.to !== undefined && !/^\d{4}-\d{2}-\d{2}$/.test(options.to)) throw new ExitError(EXIT.usage, '--to is written YYYY-MM-DD');
  const common = { days: options.days, ...(options.to ? { to: options.to } : {}), ...(options.flow ? { flows: options.flow } : {}) };
  const after = await backtest(rt, common);
  if (!options.against) {
    if (options.json) printOut(JSON.stringify(after, null, 2), { json: true });
    else printOut(formatBacktest(after));
    return EXIT.ok;
  }
  const before = await backtest(rt, { ...common, to: after.to, config: loadConfigAtRef(rt.config.dir, options.against) });
  if (options.json) printOut(JSON.stringify({ against: options.against, before, after }, null, 2), { json: true });
  else printOut(formatDiff(options.against, before, after));
  return EXIT.ok;
}

type Key = string;

/** Findings per check and platform: raised (unmuted) and muted. */
function countByCheck(result: BacktestResult): Map<Key, { raised: number; muted: number; days: Set<string> }> {
  const counts = new Map<Key, { raised: number; muted: number; days: Set<string> }>();
  for (const finding of result.findings) {
    const key = `${finding.check}|${finding.platform ?? 'all'}`;
    const entry = counts.get(key) ?? { raised: 0, muted: 0, days: new Set<string>() };
    if (finding.muted) entry.muted++;
    else entry.raised++;
    entry.days.add(finding.day);
    counts.set(key, entry);
  }
  return counts;
}


export function formatBacktest(result: BacktestResult): string {
  const lines = [`Backtest of ${result.flows.join(', ')} from ${result.from} to ${result.to} (${(result.millis / 1000).toFixed(1)} s)`];
  for (const warning of result.warnings) lines.push(`warning: ${warning}`);
  lines.push('', 'check        platform  raised  muted  days');
  for (const [key, entry] of [...countByCheck(result)].sort(([a], [b]) => a.localeCompare(b))) {
    const [check, platform] = key.split('|');
    lines.push(`${check!.padEnd(12)} ${platform!.padEnd(9)} ${String(entry.raised).padStart(6)} ${String(entry.muted).padStart(6)}  ${dayRanges(entry.days)}`);
  }
  lines.push('', `Incidents (${result.incidents.length}):`);
  for (const incident of result.incidents) {
    const until = incident.resolvedDay ? `resolved ${incident.resolvedDay}` : `open, last seen ${incident.lastSeenDay}`;
    lines.push(`  ${incident.openedDay} ${incident.flows.join(', ')} [${incident.causeLabel}] ${incident.severity}${incident.muted ? ' muted' : ''}: ${incident.title} (${until})`);
  }
  if (result.notReady.length > 0) lines.push('', `Not judged (data incomplete): ${result.notReady.map((n) => `${n.day} ${n.flow}`).join(', ')}`);
  return lines.join('\n');
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}

/** A Markdown report for a pull-request comment: what the change would have done to the alerts. */
export function formatDiff(ref: string, before: BacktestResult, after: BacktestResult): string {
  const loud = (result: BacktestResult) => result.incidents.filter((incident) => !incident.muted);
  const difference = loud(after).length - loud(before).length;
  const verdict =
    difference === 0
      ? `the same number of incidents (${loud(after).length})`
      : `**${plural(Math.abs(difference), 'incident')} ${difference < 0 ? 'fewer' : 'more'}** (${loud(before).length} -> ${loud(after).length})`;
  const lines = [
    `### plumbline backtest: ${before.from} to ${before.to}`,
    '',
    `Against \`${ref}\`, this change would have raised ${verdict} over ${before.flows.join(', ')}.`,
    '',
    '| check | platform | findings before | findings after | change |',
    '|---|---|---:|---:|---:|',
  ];
  const beforeCounts = countByCheck(before);
  const afterCounts = countByCheck(after);
  for (const key of [...new Set([...beforeCounts.keys(), ...afterCounts.keys()])].sort()) {
    const [check, platform] = key.split('|');
    const b = beforeCounts.get(key)?.raised ?? 0;
    const a = afterCounts.get(key)?.raised ?? 0;
    if (a === b && b === 0) continue;
    lines.push(`| ${check} | ${platform} | ${b} | ${a} | ${a - b > 0 ? '+' : ''}${a - b} |`);
  }
  const describe = (incident: BacktestResult['incidents'][number]) =>
    `- ${incident.openedDay} ${markdownText(incident.flows.join(', '), 200)} \\[${incident.causeLabel}\\] ${markdownText(incident.title, 300)}`;
  const fingerprints = (result: BacktestResult) => new Set(loud(result).map((incident) => `${incident.fingerprint}|${incident.openedDay}`));
  const gone = loud(before).filter((incident) => !fingerprints(after).has(`${incident.fingerprint}|${incident.openedDay}`));
  const added = loud(after).filter((incident) => !fingerprints(before).has(`${incident.fingerprint}|${incident.openedDay}`));
  if (gone.length > 0) lines.push('', `Incidents no longer raised (${gone.length}):`, ...gone.map(describe));
  if (added.length > 0) lines.push('', `New incidents (${added.length}):`, ...added.map(describe));
  for (const warning of new Set([...before.warnings, ...after.warnings])) lines.push('', `> warning: ${warning}`);
  return lines.join('\n');
}
