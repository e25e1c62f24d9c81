import { quoteIdent } from '../../db/sql.js';
import { prepareDemo } from '../../demo/prepare.js';
import { DEMO_TO } from '../../demo/scenario.js';
import { parseDuration } from '../../config/units.js';
import { buildRouter, type RouteModule, type ServeStatus } from '../../http/app.js';
import { pageGuard, type PageGuard } from '../../http/auth.js';
import { healthRoutes } from '../../http/health.js';
import { metricsRoutes } from '../../http/metrics-route.js';
import { routeModules } from '../../http/routes.js';
import { startHttpServer, type HttpServer } from '../../http/server.js';
import { createLogger, type Logger } from '../../log.js';
import { metrics } from '../../metrics.js';
import { chatDelivery, weeklyDigest } from '../../runner/jobs.js';
import { Runner } from '../../runner/runner.js';
import { stopScheduledWork } from '../../runner/shutdown.js';
import { httpRuntime, type Runtime } from '../../runtime.js';
import { watchUnhandled } from '../unhandled.js';
import { Scheduler } from '../../scheduler/scheduler.js';
import { EXIT, ExitError } from '../exit-codes.js';
import { withRuntime } from '../with-runtime.js';

export interface ServeCommandOptions {
  /** Serve the demo scenario from the embedded database, without a schedule. */
  demo?: boolean;
  /** Overrides `http.port` (0: any free port). */
  port?: number;
  /** Interface to listen on; `http.host` (this machine only) by default. */
  host?: string;
  /** False (`--no-catch-up`): skip the pass at start, wait for the first scheduled tick. */
  catchUp?: boolean;
}

/** Environment knobs of a deployment (durations such as `25s` or `36h`, or plain seconds). */
export interface ServeEnvironment {
  /** PLUMBLINE_SHUTDOWN_GRACE: how long SIGTERM waits for the run in progress (default 25s, under Kubernetes' 30 s). */
  graceMs: number;
  /** PLUMBLINE_READY_MAX_AGE: /readyz fails when the last successful daily pass is older (default 36h). */
  readyMaxAgeSeconds: number;
}

export function readServeEnvironment(env: NodeJS.ProcessEnv): ServeEnvironment {
  const seconds = (name: string, fallback: number) => {
    const raw = env[name]?.trim();
    if (raw === undefined || raw === '') return fallback;
    const value = /^\d+(\.\d+)?$/.test(raw) ? Number(raw) : parseDuration(raw);
    if (value === undefined) throw new ExitError(EXIT.usage, `${name} must be a duration such as 25s, 30m or 36h (found "${raw}")`);
    return value;
  };
  return { graceMs: seconds('PLUMBLINE_SHUTDOWN_GRACE', 25) * 1000, readyMaxAgeSeconds: seconds('PLUMBLINE_READY_MAX_AGE', 36 * 3600) };
}

/** Chat messages whose send failed are retried at the next of these ticks (the outbox keeps their backoff). */
const DELIVERY_CRON = '* * * * *';
/** How often a failed or missed digest is looked at (each try waits out its own backoff). */
const DIGEST_RETRY_CRON = '*/5 * * * *';

/**
 * `plumbline serve`: the daily pass on its cron schedule in the business
 * timezone (with a catch-up pass at start), the weekly digest, chat delivery,
 * and HTTP (/healthz, /readyz, /metrics and the pages) from one process. On
 * SIGTERM it stops scheduling, lets the run in progress finish within the
 * grace period, else marks it abandoned (the next pass of any replica reruns
 * its days), and exits 0.
 */
export async function serveCommand(dir: string, options: ServeCommandOptions, env: NodeJS.ProcessEnv = process.env): Promise<number> {
  const settings = readServeEnvironment(env);
  if (options.port !== undefined && !(Number.isInteger(options.port) && options.port >= 0 && options.port <= 65535)) {
    throw new ExitError(EXIT.usage, '--port expects a port number from 0 to 65535');
  }
  const log = createLogger({ level: env.PLUMBLINE_LOG_LEVEL ?? 'info' });
  watchUnhandled(process, log, metrics);
  return await withRuntime(dir, (rt) => serve(rt, options, settings, log, env), { log, forceEmbedded: options.demo === true, ownSignals: true });
}

async function serve(rt: Runtime, options: ServeCommandOptions, settings: ServeEnvironment, log: Logger, env: NodeJS.ProcessEnv): Promise<number> {
  const demo = options.demo === true;
  if (demo) await ensureDemo(rt, log);
  const catchUp = !demo && options.catchUp !== false;
  const runner = demo ? undefined : new Runner(rt, { digest: weeklyDigest(metrics), deliver: chatDelivery(metrics) });
  const status: ServeStatus = {
    demo,
    startupDone: () => !catchUp || (runner?.firstDailyPassEnded ?? true),
    maxPassAgeSeconds: demo ? null : settings.readyMaxAgeSeconds,
  };
  const { http } = rt.config.main;
  const host = options.host ?? http.host;
  const port = options.port ?? http.port;
  let guard: PageGuard | undefined;
  try {
    guard = pageGuard(rt.config.main, env);
  } catch (error) {
    throw new ExitError(EXIT.config, (error as Error).message);
  }
  const context = { rt: httpRuntime(rt), metrics, status };
  // With a probe port, the probes and /metrics live there alone, and the page port serves only pages.
  const probeModules = [healthRoutes, metricsRoutes];
  const servers: HttpServer[] = [];
  const listen = async (modules: readonly RouteModule[], listenPort: number, withGuard: boolean) => {
    try {
      const server = await startHttpServer({ router: buildRouter(context, modules), port: listenPort, host, log, ...(withGuard && guard ? { guard } : {}) });
      servers.push(server);
      return server;
    } catch (error) {
      await Promise.all(servers.map((server) => server.close()));
      throw new ExitError(EXIT.failed, `cannot listen on ${host}:${listenPort}: ${(error as Error).message}`);
    }
  };
  if (http.probe_port === undefined) {
    const server = await listen(routeModules, port, true);
    console.log(`plumbline is serving at ${server.url}/ (health: /healthz, readiness: /readyz, metrics: /metrics)`);
    log.info({ address: server.url, demo, auth: guard !== undefined }, 'http server listening');
  } else {
    const pages = await listen(routeModules.filter((module) => !probeModules.includes(module)), port, true);
    const probes = await listen(probeModules, http.probe_port, false);
    console.log(`plumbline is serving pages at ${pages.url}/ and health, readiness and metrics at ${probes.url}/healthz, /readyz, /metrics`);
    log.info({ address: pages.url, probes: probes.url, demo, auth: guard !== undefined }, 'http servers listening');
  }

  const schedulers = runner ? startSchedules(rt, runner, log, catchUp) : [];
  if (demo) log.info('demo: no schedule; the pages show the prepared scenario');

  const signal = await new Promise<NodeJS.Signals>((resolve) => {
    process.once('SIGTERM', () => resolve('SIGTERM'));
    process.once('SIGINT', () => resolve('SIGINT'));
  });
  log.info({ signal }, 'shutting down');
  const outcome = runner ? await stopScheduledWork(schedulers, runner, settings.graceMs, log) : 'finished';
  await Promise.all(servers.map((server) => server.close()));
  if (outcome === 'abandoned') {
    // The abandoned run still holds connections, and closing the pools would wait for it:
    // exit now; PostgreSQL rolls back its open transactions when the connections drop.
    log.warn('exiting with the abandoned run still in flight');
    process.exit(EXIT.ok);
  }
  log.info('stopped');
  return EXIT.ok;
}

/**
 * Passes (daily and digest) share one lane, so the digest never reads a day
 * being judged; delivery has its own, so a long catch-up does not hold back
 * retries.
 */
function startSchedules(rt: Runtime, runner: Runner, log: Logger, catchUp: boolean): Scheduler[] {
  const { daily_run, weekly_digest } = rt.config.main.schedule;
  const passes = new Scheduler({
    timezone: rt.timezone,
    log,
    jobs: [
      { name: 'daily', cron: daily_run, run: (tick) => runner.daily(tick.reason) },
      { name: 'digest', cron: weekly_digest, run: (tick) => runner.digest(tick.reason) },
      // A failed digest is retried with backoff, and a slot missed while down is caught up (see Runner.digest).
      { name: 'digest_retry', cron: DIGEST_RETRY_CRON, run: () => runner.digest('retry') },
    ],
  });
  const deliver = chatDelivery(metrics);
  const delivery = new Scheduler({ timezone: rt.timezone, log, jobs: [{ name: 'deliver', cron: DELIVERY_CRON, run: () => deliver(rt, { log }) }] });
  passes.start();
  delivery.start();
  if (catchUp) {
    passes.trigger('daily', 'start');
    passes.trigger('digest', 'start');
  }
  return [passes, delivery];
}

/**
 * Prepares the demo scenario only when the embedded database lacks it: the
 * preparation regenerates and judges months of events (minutes), while the
 * data persists in the embedded database between starts. `plumbline demo`
 * rebuilds it on demand.
 */
async function ensureDemo(rt: Runtime, log: Logger): Promise<void> {
  const { rows } = await rt.state.query<{ present: boolean }>({
    text: `select exists (select 1 from ${quoteIdent(rt.stateSchema)}.judged_days where day = $1) as present`,
    values: [DEMO_TO],
  });
  if (rows[0]!.present) {
    log.info('demo scenario found in the embedded database');
    return;
  }
  console.log('preparing the demo scenario in the embedded database (first start only)...');
  const demo = await prepareDemo(rt, { quiet: false });
  console.log(`demo ready: ${demo.events.toLocaleString('en-US')} events from ${demo.from} to ${demo.to}, judged from ${demo.judgedFrom}`);
}
