import type { RouteModule } from './app.js';
import { healthRoutes } from './health.js';
import { metricsRoutes } from './metrics-route.js';

/**
 * Every route module `plumbline serve` mounts. The human pages live in
 * service/http/pages/ and join this list as one more module.
 */
export const routeModules: readonly RouteModule[] = [healthRoutes, metricsRoutes];
