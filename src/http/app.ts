import { Hono, type MiddlewareHandler } from 'hono';
import { authorise, challenge } from './auth.js';
import { readConfig, type ServiceBindings } from './config.js';
import { corsHeaders, isPreflight, preflightHeaders } from './cors.js';
import { problemResponse } from './problem.js';
import { clientKey, RETRY_AFTER_SECONDS, withinRateLimit } from './rate-limit.js';
import { honoPath, pathMatcher, type AppContext, type AppEnv, type RouteDefinition } from './route.js';
import { ROUTES } from './routes/index.js';
import { applySecurityHeaders, CACHE } from './security-headers.js';

/**
 * The HTTP edge: configuration, CORS, token, rate limit and headers around the routes of
 * src/http/routes. Nothing a caller sends may produce a 500: every failure of the core that a
 * request can cause is typed and mapped to 4xx.
 */
export function createApp(routes: readonly RouteDefinition[] = ROUTES): Hono<AppEnv> {
  const app = new Hono<AppEnv>();
  const table = routes.map((route) => ({ route, matcher: pathMatcher(route.path) }));

  /** Methods a path answers, for Allow and preflights (HEAD with GET; OPTIONS always). */
  const allowedMethods = (pathname: string): string[] => {
    const methods = new Set<string>();
    for (const { route, matcher } of table) {
      if (!matcher.test(pathname)) continue;
      methods.add(route.method.toUpperCase());
      if (route.method === 'get') methods.add('HEAD');
    }
    if (methods.size > 0) methods.add('OPTIONS');
    return [...methods];
  };
  const routeFor = (c: AppContext): RouteDefinition | undefined => {
    const pathname = new URL(c.req.url).pathname;
    const method = c.req.method === 'HEAD' ? 'get' : c.req.method.toLowerCase();
    return table.find(({ route, matcher }) => route.method === method && matcher.test(pathname))?.route;
  };

  // Outermost: every response, errors and 404/405 included, leaves with the security and CORS headers.
  app.use('*', async (c, next) => {
    const config = readConfig(c.env);
    c.set('config', config);
    c.set('routes', routes);
    await next();
    const route = routeFor(c);
    // A fresh Response: one passed through from a fetch (a Durable Object, say) has immutable headers.
    c.res = new Response(c.res.body, c.res);
    const headers = c.res.headers;
    applySecurityHeaders(headers, { ownCsp: route?.ownCsp === true && c.res.status < 300 });
    // Errors are never cached; a route's own policy applies to its successes (and 304s).
    headers.set('cache-control', route && c.res.status < 400 ? CACHE[route.cache] : CACHE.noStore);
    for (const [name, value] of Object.entries(corsHeaders(c.req.header('origin') ?? null, config.cors))) {
      if (name === 'vary') headers.append('vary', value);
      else headers.set(name, value);
    }
  });

  // OPTIONS: CORS preflights, and plain OPTIONS listing what a path allows.
  app.use('*', async (c, next) => {
    if (c.req.method !== 'OPTIONS') return next();
    const allow = allowedMethods(new URL(c.req.url).pathname);
    if (allow.length === 0) return problemResponse(404, `no route for ${new URL(c.req.url).pathname}`);
    const extra = isPreflight(c.req.raw) ? preflightHeaders(c.req.header('origin') ?? null, c.get('config').cors, allow) : {};
    return new Response(null, { status: 204, headers: { allow: allow.join(', '), ...extra } });
  });

  for (const route of routes) {
    const path = honoPath(route.path);
    const handler: MiddlewareHandler<AppEnv> = async (c) => {
      const config = c.get('config');
      if (route.protected) {
        const refused = await guard(c, config);
        if (refused) return refused;
      }
      return route.handle(c, config);
    };
    if (route.method === 'get') app.get(path, handler);
    else app.post(path, handler);
  }

  app.notFound((c) => {
    const pathname = new URL(c.req.url).pathname;
    const allow = allowedMethods(pathname);
    if (allow.length > 0) {
      return problemResponse(405, `${c.req.method} is not allowed on ${pathname}; allowed: ${allow.join(', ')}`, { headers: { allow: allow.join(', ') } });
    }
    return problemResponse(404, `no route for ${c.req.method} ${pathname}`);
  });
  app.onError((err) => {
    // A bug, not a caller's mistake; keep the message generic and log the detail.
    console.error(err);
    return problemResponse(500, 'an internal error occurred; this is a bug in wobble, please report it with the request');
  });
  return app;
}

/** Configuration, token and rate limit for a protected route; a problem response when the request may not go on. */
async function guard(c: AppContext, config: ReturnType<typeof readConfig>): Promise<Response | undefined> {
  if (config.problems.length > 0) {
    // Fail closed: a half-read configuration (say, an empty token secret) must not open the service.
    console.error(`wobble configuration: ${config.problems.join('; ')}`);
    return problemResponse(500, 'the service is misconfigured; its operator has been told (see the Worker logs)');
  }
  const auth = await authorise(c.req.header('authorization') ?? null, config.tokens);
  if (!auth.ok) return problemResponse(401, auth.detail, { headers: { 'www-authenticate': challenge(auth.error) } });
  if (!(await withinRateLimit(config.rateLimiter, clientKey(c.req.raw, auth.key)))) {
    return problemResponse(429, `too many requests from this client; wait ${RETRY_AFTER_SECONDS} s and retry`, { headers: { 'retry-after': String(RETRY_AFTER_SECONDS) } });
  }
  return undefined;
}

export type { ServiceBindings };
