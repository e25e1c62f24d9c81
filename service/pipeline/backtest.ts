/**
 * Backtests: the checks and the cause analysis replayed over stored rollups
 * (never the raw events), through the live code path (`judgeDays`), writing
 * into a throw-away schema inside one transaction that is rolled back. So a
 * backtest can neither send a message nor change the state, and it gives what
 * live runs with that configuration would have given.
 */
import { randomBytes } from 'node:crypto';
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve } from 'node:path';
import type { Cause } from '../../checks/causes/types.js';
import type { Finding } from '../../checks/types.js';
import { addDays, toFlowDefinition } from '../config/definitions.js';
import { loadConfig, type LoadedConfig } from '../config/load.js';
import { applyMigrations } from '../db/migrate.js';
import { quoteIdent } from '../db/sql.js';
import type { Runtime } from '../runtime.js';
import { judgeDays, replayClock } from './run-day.js';

export interface BacktestIncident {
  id: string;
  flow: string;
  /** The flows it holds back (several for a data delay). */
  flows: string[];
  causeLabel: string;
  title: string;
  platform: string | null;
  version: string | null;
  severity: string;
  muted: boolean;
  since: string;
  openedDay: string;
  lastSeenDay: string;
  resolvedDay: string | null;
  fingerprint: string;
  cause: Cause | null;
}

export interface BacktestResult {
  from: string;
  to: string;
  flows: string[];
  findings: Array<Finding & { flow: string; day: string }>;
  incidents: BacktestIncident[];
  notReady: Array<{ flow: string; day: string; reason: string | null }>;
  /** Flows whose steps differ from the configuration the rollups were made with. */
  warnings: string[];
  millis: number;
}

export interface BacktestOptions {
  days: number;
  /** Last day replayed; default: the newest day with rollups. */
  to?: string;
  flows?: string[];
  /** The configuration to replay (default: the runtime's own). */
  config?: LoadedConfig;
}

export async function backtest(rt: Runtime, options: BacktestOptions): Promise<BacktestResult> {
  const started = performance.now();
  const to = options.to ?? (await newestRolledUpDay(rt));
  if (to === undefined) throw new Error('no rollups in the state schema yet: run `plumbline run` (or the demo) first');
  const from = addDays(to, -(options.days - 1));
  const config = options.config ?? rt.config;
  const known = new Set(config.flows.map((flow) => flow.config.flow));
  for (const flow of options.flows ?? []) if (!known.has(flow)) throw new Error(`no flow "${flow}" in the configuration (flows: ${[...known].join(', ')})`);
  const chosen = config.flows.filter((flow) => !options.flows || options.flows.includes(flow.config.flow));
  const replay: Runtime = { ...rt, config: { ...config, flows: chosen }, flows: chosen.map((flow) => toFlowDefinition(flow.config)) };

  const warnings: string[] = [];
  for (const flow of replay.flows) {
    const live = rt.flows.find((f) => f.id === flow.id);
    if (!live) warnings.push(`flow ${flow.id} has no rollups yet: its funnel is rolled up from the first live run on; run \`plumbline run --from --to\` to backfill it`);
    else if (JSON.stringify(live.steps) !== JSON.stringify(flow.steps) || live.conversionWindowSeconds !== flow.conversionWindowSeconds) {
      warnings.push(`flow ${flow.id}: steps or conversion window differ from the rolled-up ones; the backtest replays the stored funnel, so it cannot show their effect`);
    }
  }

  const scratch = `${rt.stateSchema}_backtest_${randomBytes(4).toString('hex')}`;
  const client = await rt.state.connect();
  try {
    await client.query('begin');
    await applyMigrations(client, scratch);
    const days: string[] = [];
    for (let day = from; day <= to; day = addDays(day, 1)) days.push(day);
    await judgeDays(replay, days, replayClock(replay), { schema: scratch, client });
    const s = quoteIdent(scratch);
    const findings = await client.query<Finding & { flow: string; day: string }>(
      `select flow, to_char(day, 'YYYY-MM-DD') as day, check_id as "check", kind, series_key as "seriesKey", metric, platform, version, subject,
        severity, observed, expected, score, direction, to_char(since, 'YYYY-MM-DD') as since, message, excerpt, evidence, calendar,
        muted_reason as muted
       from ${s}.findings order by day, flow, check_id, series_key`,
    );
    const incidents = await client.query<BacktestIncident>(
      `select i.id, i.flow, i.flows, i.cause_label as "causeLabel", i.title, i.platform, i.version, i.severity, i.muted,
        to_char(i.since, 'YYYY-MM-DD') as since, to_char(i.opened_day, 'YYYY-MM-DD') as "openedDay",
        to_char(i.last_seen_day, 'YYYY-MM-DD') as "lastSeenDay", to_char(i.resolved_day, 'YYYY-MM-DD') as "resolvedDay", i.fingerprint,
        (select d.cause from ${s}.incident_days d where d.incident_id = i.id order by d.day desc limit 1) as cause
       from ${s}.incidents i order by i.opened_day, i.flow, i.fingerprint`,
    );
    const notReady = await client.query<{ flow: string; day: string; reason: string | null }>(
      `select flow, to_char(day, 'YYYY-MM-DD') as day, reason from ${s}.judged_days where verdict = 'not_ready' order by day, flow`,
    );
    return {
      from,
      to,
      flows: replay.flows.map((flow) => flow.id),
      findings: findings.rows,
      incidents: incidents.rows,
      notReady: notReady.rows,
      warnings,
      millis: performance.now() - started,
    };
  } finally {
    // Nothing of a backtest survives it.
    await client.query('rollback').catch(() => undefined);
    client.release();
  }
}

async function newestRolledUpDay(rt: Runtime): Promise<string | undefined> {
  const { rows } = await rt.state.query<{ day: string | null }>(`select to_char(max(day), 'YYYY-MM-DD') as day from ${quoteIdent(rt.stateSchema)}.day_status`);
  return rows[0]?.day ?? undefined;
}

/**
 * The configuration folder as it is at git revision `ref`, read with
 * `git show` into a temporary folder and loaded there. Environment references
 * resolve against `env`.
 */
export function loadConfigAtRef(dir: string, ref: string, env: NodeJS.ProcessEnv = process.env): LoadedConfig {
  const absolute = resolve(dir);
  const git = (args: string[]) => execFileSync('git', args, { cwd: absolute, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
  let root: string;
  try {
    root = git(['rev-parse', '--show-toplevel']).trim();
    git(['rev-parse', '--verify', '--quiet', `${ref}^{commit}`]);
  } catch {
    throw new Error(`cannot read git revision "${ref}" for ${dir}: is it a git checkout and does the revision exist?`);
  }
  const prefix = relative(root, absolute).split('\\').join('/');
  const files = git(['ls-tree', '-r', '--name-only', '--full-tree', ref, '--', prefix === '' ? '.' : prefix])
    .split('\n')
    .filter((file) => /\.ya?ml$/.test(file));
  if (files.length === 0) throw new Error(`no configuration files under ${prefix || '.'} at ${ref}`);
  const temp = mkdtempSync(join(tmpdir(), 'plumbline-config-'));
  try {
    for (const file of files) {
      const target = join(temp, relative(prefix, file));
      mkdirSync(dirname(target), { recursive: true });
      writeFileSync(target, git(['show', `${ref}:${file}`]));
    }
    return loadConfig(temp, { env });
  } finally {
    rmSync(temp, { recursive: true, force: true });
  }
}
