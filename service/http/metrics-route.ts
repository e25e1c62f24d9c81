import type { Logger } from '../log.js';
import type { Metrics } from '../metrics.js';
import { dataLagQuery, lastSuccessQuery } from '../runner/queries.js';
import type { Runtime } from '../runtime.js';
import type { RouteModule } from './app.js';

/**
 * Sets the gauges that come from the state schema (data lag, last successful
 * pass) from database time, so every replica reports the same values. On
 * failure the previous values stay and the scrape still answers.
 */
export async function refreshStateGauges(rt: Pick<Runtime, 'state' | 'stateSchema'>, metrics: Metrics, log: Logger): Promise<void> {
  try {
    const [{ rows: lags }, { rows: passes }] = await Promise.all([
      rt.state.query<{ platform: string; lag: number }>(dataLagQuery(rt.stateSchema)),
      rt.state.query<{ job: string; at: number }>(lastSuccessQuery(rt.stateSchema)),
    ]);
    metrics.dataLag.reset();
    for (const { platform, lag } of lags) metrics.dataLag.set({ platform }, lag);
    for (const { job, at } of passes) metrics.lastSuccess.set({ job }, at);
  } catch (error) {
    log.warn({ err: error }, 'metrics: could not read the state schema; serving the previous values');
  }
}

/** `/metrics` in the Prometheus text format. */
export const metricsRoutes: RouteModule = (router, { rt, metrics }) => {
  router.register('GET', '/metrics', async () => {
    await refreshStateGauges(rt, metrics, rt.log);
    return { status: 200, headers: { 'content-type': metrics.registry.contentType }, body: await metrics.registry.metrics() };
  });
};
