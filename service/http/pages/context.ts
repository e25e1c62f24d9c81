import type { AppContext } from '../app.js';

/** What the pages read: the runtime (state pool, flows, config, timezone) and whether this is the demo. */
export type PagesContext = Pick<AppContext, 'rt' | 'status'>;
