import type pg from 'pg';
import { describeDatabaseError } from '../db/errors.js';
import { lastSuccessQuery } from '../runner/queries.js';
import type { AppContext, RouteModule, ServeStatus } from './app.js';
import { json, text } from './router.js';

export interface ReadinessCheck {
  ok: boolean;
  detail: string;
}

export interface Readiness {
  ready: boolean;
  checks: { database: ReadinessCheck; startup: ReadinessCheck; last_daily_pass?: ReadinessCheck };
}

/** How long /readyz waits for the state database before calling it unreachable. */
const DATABASE_TIMEOUT_MS = 2000;

/**
 * Ready when the state database answers within two seconds, the catch-up pass
 * at start has ended, and the last successful daily pass of any replica ended
 * less than `maxPassAgeSeconds` ago by database time.
 */
export async function readiness(state: pg.Pool, schema: string, status: ServeStatus): Promise<Readiness> {
  let timer: NodeJS.Timeout | undefined;
  const timeout = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new Error(`no answer within ${DATABASE_TIMEOUT_MS} ms`)), DATABASE_TIMEOUT_MS);
  });
  let daily: { age: number } | undefined;
  let database: ReadinessCheck;
  try {
    const { rows } = await Promise.race([state.query<{ job: string; age: number }>(lastSuccessQuery(schema)), timeout]);
    daily = rows.find((row) => row.job === 'daily');
    database = { ok: true, detail: 'state database reachable' };
  } catch (error) {
    database = { ok: false, detail: `state database unreachable: ${describeDatabaseError(error)}` };
  } finally {
    clearTimeout(timer);
  }
  const started = status.startupDone();
  const checks: Readiness['checks'] = {
    database,
    startup: { ok: started, detail: started ? 'catch-up at start ended' : 'catch-up at start still running' },
  };
  if (status.maxPassAgeSeconds !== null && database.ok) {
    const limit = status.maxPassAgeSeconds;
    checks.last_daily_pass =
      daily === undefined
        ? { ok: false, detail: 'no daily pass has succeeded yet' }
        : { ok: daily.age <= limit, detail: `last successful daily pass ended ${Math.round(daily.age)} s ago (limit ${limit} s)` };
  }
  return { ready: Object.values(checks).every((check) => check.ok), checks };
}

/** `/healthz`: the process answers. `/readyz`: see `readiness`; 503 with the reasons when not ready. */
export const healthRoutes: RouteModule = (router, { rt, status }: AppContext) => {
  router.register('GET', '/healthz', () => text('ok\n'));
  router.register('GET', '/readyz', async () => {
    const result = await readiness(rt.state, rt.stateSchema, status);
    return json(result, result.ready ? 200 : 503);
  });
};
