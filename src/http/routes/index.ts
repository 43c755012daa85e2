import type { RouteDefinition } from '../route.js';
import { checkRoute } from './check.js';
import { demoRoute, healthRoute, openApiRoute, pageRoute, schemaRoute } from './discovery.js';
import { optimizeRoute } from './optimize.js';
import { renderRoute } from './render.js';
import { stressRoute } from './stress.js';
import { stressRangeRoute } from '../shards.js';

/**
 * Every route of the service, in the order OpenAPI lists them. To add a route, write its
 * definition in a module of its own and list it here: the app, 405/Allow, CORS preflights and the
 * OpenAPI document all follow from this table.
 */
export const ROUTES: readonly RouteDefinition[] = [pageRoute, healthRoute, optimizeRoute, stressRoute, stressRangeRoute, checkRoute, renderRoute, demoRoute, schemaRoute, openApiRoute];
