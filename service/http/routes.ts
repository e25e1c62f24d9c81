import type { RouteModule } from './app.js';
import { healthRoutes } from './health.js';
import { metricsRoutes } from './metrics-route.js';
import { pageRoutes } from './pages/index.js';

/** Every route module `plumbline serve` mounts; the human pages live in service/http/pages/. */
export const routeModules: readonly RouteModule[] = [healthRoutes, metricsRoutes, pageRoutes];
