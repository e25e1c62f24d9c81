/**
 * The human pages, server-side rendered from the state schema on each
 * request: `/` (flows, open incidents, runs, chat messages) and
 * `/incidents/:id` (one incident with its charts). Chat messages link to the
 * incident pages through `http.public_url`; the pages link to each other
 * with relative addresses, so they also work behind a path prefix.
 */
import type { RouteModule } from '../app.js';
import { html } from '../router.js';
import { loadIncidentPage, renderIncidentNotFound, renderIncidentPage } from './incident.js';
import { loadOverview, renderOverview } from './overview.js';

export const pageRoutes: RouteModule = (router, context) => {
  router.register('GET', '/', async () => html(renderOverview(await loadOverview(context))));
  router.register('GET', '/incidents/:id', async ({ params }) => {
    const id = params.id!;
    const page = await loadIncidentPage(context, id);
    return page ? html(await renderIncidentPage(page)) : html(renderIncidentNotFound(id, context.status.demo), 404);
  });
};
