import type { Metrics } from '../metrics.js';
import type { Runtime } from '../runtime.js';
import { Router } from './router.js';

/** What this `serve` process knows about itself, for readiness and for pages that show the runner. */
export interface ServeStatus {
  /** Serving the demo scenario: no schedule, readiness checks the database only. */
  demo: boolean;
  /** True once the catch-up pass at start has ended (always true without a schedule). */
  startupDone(): boolean;
  /** Oldest acceptable age, in seconds of database time, of the last successful daily pass; null: not checked. */
  maxPassAgeSeconds: number | null;
}

/** Everything a route module can use: config, pools and logger (rt), metrics, and the process status. */
export interface AppContext {
  rt: Runtime;
  metrics: Metrics;
  status: ServeStatus;
}

/** A group of routes mounted by `plumbline serve` (health, metrics, the human pages). */
export type RouteModule = (router: Router, context: AppContext) => void;

export function buildRouter(context: AppContext, modules: readonly RouteModule[]): Router {
  const router = new Router();
  for (const register of modules) register(router, context);
  return router;
}
