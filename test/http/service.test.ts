import { gzipSync } from 'node:zlib';
import { beforeEach, describe, expect, it, vi } from 'vitest';
import { createApp } from '../../src/http/app.js';
import type { RateLimitBinding, ServiceBindings } from '../../src/http/config.js';
import type { RouteDefinition } from '../../src/http/route.js';
import { healthRoute } from '../../src/http/routes/discovery.js';
import { ROUTES } from '../../src/http/routes/index.js';
import { LIMITS } from '../../src/schema/limits.js';
import { momentsProposal } from '../helpers/proposals.js';

// The service edge in Node (Hono app.request with a Worker-like env); test/worker repeats the
// essentials inside workerd.
const app = createApp();
const json = { 'content-type': 'application/json' };
const small = () => momentsProposal({ resampling: { draws: 20, seed: 1 }, compare: [{ name: 'minimum-variance' }] });

// Misconfiguration is logged for the operator; keep the test output quiet.
beforeEach(() => {
  vi.spyOn(console, 'error').mockImplementation(() => undefined);
});

function call(path: string, init: RequestInit = {}, env: ServiceBindings = {}) {
  return app.request(`https://wobble.test${path}`, init, env);
}
const post = (path: string, body: unknown, env: ServiceBindings = {}, headers: Record<string, string> = json) =>
  call(path, { method: 'POST', headers, body: typeof body === 'string' ? body : JSON.stringify(body) }, env);

/** Every route of the table with a request that reaches its handler. */
const EXAMPLE_PATHS = ROUTES.map((route) => ({ route, path: route.path.replace('{name}', 'proposal') }));

describe('bearer token (WOBBLE_API_TOKEN)', () => {
  const env = { WOBBLE_API_TOKEN: 'first-token-0123456789, second-token-abcdef' };

  it('is not required when no token is configured', async () => {
    expect((await post('/v1/optimize', small())).status).toBe(200);
  });

  it('protects every /v1/* POST with 401 problem+json and a Bearer challenge', async () => {
    for (const route of ROUTES.filter((r) => r.method === 'post')) {
      const res = await post(route.path, small(), env);
      expect(res.status, route.path).toBe(401);
      expect(res.headers.get('content-type')).toContain('application/problem+json');
      expect(res.headers.get('www-authenticate')).toBe('Bearer realm="wobble"');
      expect(((await res.json()) as { status: number }).status).toBe(401);
    }
  });

  it('accepts each configured token (rotation) and refuses others, near misses included', async () => {
    for (const token of ['first-token-0123456789', 'second-token-abcdef']) {
      expect((await post('/v1/optimize', small(), env, { ...json, authorization: `Bearer ${token}` })).status, token).toBe(200);
    }
    for (const header of ['Bearer first-token-012345678', 'Bearer first-token-01234567890', 'Bearer second-token-abcdeF', 'Bearer ', 'Basic Zmlyc3Q6eA==', 'first-token-0123456789']) {
      const res = await post('/v1/optimize', small(), env, { ...json, authorization: header });
      expect(res.status, header).toBe(401);
      expect(res.headers.get('www-authenticate')).toMatch(/^Bearer realm="wobble", error="invalid_(token|request)"$/);
    }
    // RFC 6750 §2.1: the scheme name is case-insensitive.
    expect((await post('/v1/optimize', small(), env, { ...json, authorization: 'bearer second-token-abcdef' })).status).toBe(200);
  });

  it('leaves the page, health, schemas, the demo and OpenAPI open', async () => {
    for (const { path } of EXAMPLE_PATHS.filter((e) => e.route.method === 'get')) {
      expect((await call(path, {}, env)).status, path).toBe(200);
    }
  });

  it('fails closed when the secret is set but empty', async () => {
    const res = await post('/v1/optimize', small(), { WOBBLE_API_TOKEN: ' , ' });
    expect(res.status).toBe(500);
    expect(((await res.json()) as { detail: string }).detail).toMatch(/misconfigured/);
  });
});

describe('CORS (WOBBLE_CORS_ORIGINS)', () => {
  const preflight = (path: string, origin: string, env: ServiceBindings) =>
    call(path, { method: 'OPTIONS', headers: { origin, 'access-control-request-method': 'POST', 'access-control-request-headers': 'authorization, content-type' } }, env);

  it('allows any origin by default without a token, with no credentials', async () => {
    const res = await preflight('/v1/stress', 'https://elsewhere.test', {});
    expect(res.status).toBe(204);
    expect(res.headers.get('access-control-allow-origin')).toBe('*');
    expect(res.headers.get('access-control-allow-methods')).toBe('POST, OPTIONS');
    expect(res.headers.get('access-control-allow-headers')).toMatch(/Authorization/);
    expect(res.headers.get('access-control-allow-headers')).toMatch(/Content-Type/);
    expect(res.headers.get('access-control-allow-credentials')).toBeNull();
    const simple = await post('/v1/optimize', small(), {}, { ...json, origin: 'https://elsewhere.test' });
    expect(simple.headers.get('access-control-allow-origin')).toBe('*');
  });

  it('allows only listed origins when configured, and says the answer varies by Origin', async () => {
    const env = { WOBBLE_CORS_ORIGINS: 'https://reviews.example.org, https://ci.example.org/' };
    const ok = await preflight('/v1/check', 'https://ci.example.org', env);
    expect(ok.headers.get('access-control-allow-origin')).toBe('https://ci.example.org');
    expect(ok.headers.get('vary')).toMatch(/Origin/);
    const refused = await preflight('/v1/check', 'https://evil.test', env);
    expect(refused.status).toBe(204);
    expect(refused.headers.get('access-control-allow-origin')).toBeNull();
    expect(refused.headers.get('access-control-allow-methods')).toBeNull();
    const simple = await call('/healthz', { headers: { origin: 'https://reviews.example.org' } }, env);
    expect(simple.headers.get('access-control-allow-origin')).toBe('https://reviews.example.org');
  });

  it('with a token and no origins configured, refuses other origins (same-origin only)', async () => {
    const res = await preflight('/v1/stress', 'https://elsewhere.test', { WOBBLE_API_TOKEN: 'secret-token' });
    expect(res.headers.get('access-control-allow-origin')).toBeNull();
    const star = await preflight('/v1/stress', 'https://elsewhere.test', { WOBBLE_API_TOKEN: 'secret-token', WOBBLE_CORS_ORIGINS: '*' });
    expect(star.headers.get('access-control-allow-origin')).toBe('*');
  });

  it('puts CORS headers on errors too, so a browser can read a 401 or 400', async () => {
    const res = await post('/v1/stress', '{}', { WOBBLE_API_TOKEN: 't0ken', WOBBLE_CORS_ORIGINS: 'https://app.test' }, { ...json, origin: 'https://app.test' });
    expect(res.status).toBe(401);
    expect(res.headers.get('access-control-allow-origin')).toBe('https://app.test');
    expect(res.headers.get('access-control-expose-headers')).toMatch(/WWW-Authenticate/);
  });

  it('answers a preflight for an unknown path with 404', async () => {
    expect((await preflight('/v2/nothing', 'https://a.test', {})).status).toBe(404);
  });
});

describe('methods, routes and headers', () => {
  it('405 with Allow for a wrong method on every route, 404 problem+json for unknown paths', async () => {
    for (const { route, path } of EXAMPLE_PATHS) {
      const wrong = route.method === 'get' ? 'POST' : 'GET';
      const res = await call(path, { method: wrong });
      expect(res.status, `${wrong} ${path}`).toBe(405);
      expect(res.headers.get('content-type')).toContain('application/problem+json');
      expect(res.headers.get('allow')).toBe(route.method === 'get' ? 'GET, HEAD, OPTIONS' : 'POST, OPTIONS');
      expect((await call(path, { method: 'DELETE' })).status).toBe(405);
    }
    const missing = await call('/v1/nothing');
    expect(missing.status).toBe(404);
    expect(missing.headers.get('content-type')).toContain('application/problem+json');
  });

  it('sets nosniff, Referrer-Policy and Cache-Control on every route and on errors; a restrictive CSP except on the page', async () => {
    const responses: [string, Response][] = [];
    for (const { route, path } of EXAMPLE_PATHS) responses.push([path, route.method === 'get' ? await call(path) : await post(path, { proposal: small(), policy: { rules: [] }, ...small() })]);
    responses.push(['404', await call('/nope')], ['405', await call('/healthz', { method: 'POST' })], ['415', await post('/v1/stress', 'x', {}, { 'content-type': 'text/plain' })]);
    for (const [what, res] of responses) {
      expect(res.headers.get('x-content-type-options'), what).toBe('nosniff');
      expect(res.headers.get('referrer-policy'), what).toBe('no-referrer');
      expect(res.headers.get('cache-control'), what).toBeTruthy();
      if (what === '/') expect(res.headers.get('content-security-policy') ?? '', what).not.toBe("default-src 'none'; frame-ancestors 'none'");
      else expect(res.headers.get('content-security-policy'), what).toMatch(/default-src 'none'.*frame-ancestors 'none'/);
    }
    const byPath = Object.fromEntries(responses.map(([p, r]) => [p, r]));
    expect(byPath['/v1/stress'].headers.get('cache-control')).toBe('no-store');
    expect(byPath['/healthz'].headers.get('cache-control')).toBe('no-store');
    expect(byPath['404'].headers.get('cache-control')).toBe('no-store');
    expect(byPath['/v1/schemas/proposal'].headers.get('cache-control')).toMatch(/max-age=\d{5,}/);
  });

  it('serves schemas, the demo and OpenAPI with an ETag and answers 304 to If-None-Match', async () => {
    for (const path of ['/v1/schemas/proposal', '/v1/examples/demo', '/openapi.json']) {
      const first = await call(path);
      const tag = first.headers.get('etag');
      expect(tag, path).toMatch(/^"[0-9a-f]{32}"$/);
      const again = await call(path, { headers: { 'if-none-match': tag! } });
      expect(again.status, path).toBe(304);
      expect(again.headers.get('etag')).toBe(tag);
      expect(await again.text()).toBe('');
      expect((await call(path, { headers: { 'if-none-match': '"other"' } })).status).toBe(200);
    }
  });

  it('adds the headers to a route added to the table, even when its response has immutable headers (as a fetched one has)', async () => {
    const passThrough: RouteDefinition = { ...healthRoute, path: '/v1/pass-through', operationId: 'passThrough', handle: () => Response.redirect('https://wobble.test/healthz', 302) };
    const extended = createApp([...ROUTES, passThrough]);
    const res = await extended.request('https://wobble.test/v1/pass-through');
    expect(res.status).toBe(302);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect((await extended.request('https://wobble.test/v1/pass-through', { method: 'POST' })).headers.get('allow')).toBe('GET, HEAD, OPTIONS');
  });

  it('answers HEAD like GET without a body, and plain OPTIONS with Allow', async () => {
    const head = await call('/healthz', { method: 'HEAD' });
    expect(head.status).toBe(200);
    expect(await head.text()).toBe('');
    const options = await call('/v1/stress', { method: 'OPTIONS' });
    expect(options.status).toBe(204);
    expect(options.headers.get('allow')).toBe('POST, OPTIONS');
  });
});

describe('415 for bodies that are not application/json', () => {
  it.each([
    ['text/plain', { 'content-type': 'text/plain' }],
    ['text/plain;charset=UTF-8 (a form-free cross-site post)', { 'content-type': 'text/plain;charset=UTF-8' }],
    ['a form', { 'content-type': 'application/x-www-form-urlencoded' }],
    ['multipart', { 'content-type': 'multipart/form-data; boundary=x' }],
    ['no content type', {}],
    ['another JSON-ish type', { 'content-type': 'application/merge-patch+json' }],
    ['a charset other than UTF-8', { 'content-type': 'application/json; charset=iso-8859-1' }],
    ['an encoding the service does not decode', { ...json, 'content-encoding': 'br' }],
    ['stacked encodings', { ...json, 'content-encoding': 'gzip, gzip' }],
  ])('%s', async (_name, headers: Record<string, string>) => {
    const res = await post('/v1/stress', small(), {}, headers);
    expect(res.status).toBe(415);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
    if (headers['content-encoding']) expect(res.headers.get('accept-encoding')).toBe('gzip, deflate');
  });

  it('accepts application/json with charset=utf-8, and gzip-encoded bodies (size limit counted after decoding)', async () => {
    expect((await post('/v1/optimize', small(), {}, { 'content-type': 'Application/JSON; charset="UTF-8"' })).status).toBe(200);
    const gz = await call('/v1/optimize', { method: 'POST', headers: { ...json, 'content-encoding': 'gzip' }, body: gzipSync(JSON.stringify(small())) });
    expect(gz.status).toBe(200);
    const bomb = gzipSync(Buffer.alloc(LIMITS.maxBodyBytes + 1024, 0x20));
    expect(bomb.byteLength).toBeLessThan(LIMITS.maxBodyBytes / 100);
    const refused = await call('/v1/optimize', { method: 'POST', headers: { ...json, 'content-encoding': 'gzip' }, body: bomb });
    expect(refused.status).toBe(413);
    const broken = await call('/v1/optimize', { method: 'POST', headers: { ...json, 'content-encoding': 'gzip' }, body: 'not gzip at all' });
    expect(broken.status).toBe(400);
  });
});

describe('WOBBLE_MAX_WORK', () => {
  it('lowers the work limit: a request that fits the built-in limit is refused with 413 naming the lowered limit', async () => {
    const body = momentsProposal({ resampling: { draws: 200, seed: 1 } });
    expect((await post('/v1/stress', body)).status).toBe(200);
    for (const path of ['/v1/stress', '/v1/optimize']) {
      const res = await post(path, body, { WOBBLE_MAX_WORK: '10' });
      expect(res.status, path).toBe(413);
      expect(((await res.json()) as { detail: string }).detail).toMatch(/limit of 1\.0e\+1 \(maxWorkUnits, lowered on this deployment\)/);
    }
    const check = await post('/v1/check', { proposal: body, policy: { rules: [{ metric: 'max-weight-sd', max: 1 }] } }, { WOBBLE_MAX_WORK: '10' });
    expect(check.status).toBe(413);
  });

  it('also bounds the break-even forecast shifts: just under the full count, they are skipped with a warning, not refused', async () => {
    const body = momentsProposal({ resampling: { draws: 50, seed: 2 } });
    const full = (await (await post('/v1/stress', body)).json()) as { meta: { workUnits: number }; warnings: { code: string }[] };
    expect(full.warnings.map((w) => w.code)).not.toContain('forecast-sensitivity-skipped');
    const res = await post('/v1/stress', body, { WOBBLE_MAX_WORK: String(full.meta.workUnits - 1) });
    expect(res.status).toBe(200);
    const lowered = (await res.json()) as { meta: { workUnits: number }; warnings: { code: string }[] };
    expect(lowered.warnings.map((w) => w.code)).toContain('forecast-sensitivity-skipped');
    expect(lowered.meta.workUnits).toBeLessThan(full.meta.workUnits);
  });

  it('never raises the built-in limit, and a value that is not a positive number fails closed', async () => {
    const over = momentsProposal({ resampling: { draws: LIMITS.maxDraws + 1, seed: 1 } });
    expect((await post('/v1/stress', over, { WOBBLE_MAX_WORK: '1e30' })).status).toBe(413);
    for (const bad of ['lots', '-5', '0']) {
      const res = await post('/v1/optimize', small(), { WOBBLE_MAX_WORK: bad });
      expect(res.status, bad).toBe(500);
    }
    // The health check says so (without the detail), so a deploy check catches it.
    const health = await call('/healthz', {}, { WOBBLE_MAX_WORK: 'lots' });
    expect(health.status).toBe(503);
    expect(((await health.json()) as { detail: string }).detail).not.toContain('lots');
  });
});

describe('rate limiting (WOBBLE_RATE_LIMITER binding)', () => {
  /** A stand-in with the binding's interface (the real one is exercised in test/worker). */
  function countingLimiter(limit: number): RateLimitBinding & { keys: string[] } {
    const counts = new Map<string, number>();
    const keys: string[] = [];
    return {
      keys,
      async limit({ key }) {
        keys.push(key);
        counts.set(key, (counts.get(key) ?? 0) + 1);
        return { success: counts.get(key)! <= limit };
      },
    };
  }

  it('answers 429 with Retry-After past the limit, per client, and never limits the open routes', async () => {
    const limiter = countingLimiter(2);
    const env = { WOBBLE_RATE_LIMITER: limiter };
    const from = (ip: string) => ({ ...json, 'cf-connecting-ip': ip });
    expect((await post('/v1/optimize', small(), env, from('192.0.2.1'))).status).toBe(200);
    expect((await post('/v1/optimize', small(), env, from('192.0.2.1'))).status).toBe(200);
    const third = await post('/v1/optimize', small(), env, from('192.0.2.1'));
    expect(third.status).toBe(429);
    expect(third.headers.get('retry-after')).toBe('60');
    expect(third.headers.get('content-type')).toContain('application/problem+json');
    expect((await post('/v1/optimize', small(), env, from('192.0.2.2'))).status).toBe(200);
    for (let i = 0; i < 5; i++) expect((await call('/healthz', {}, env)).status).toBe(200);
    expect(limiter.keys).toEqual(['ip:192.0.2.1', 'ip:192.0.2.1', 'ip:192.0.2.1', 'ip:192.0.2.2']);
  });

  it('lets requests through (and logs) when the binding itself fails', async () => {
    const broken: RateLimitBinding = { limit: () => Promise.reject(new Error('counter unavailable')) };
    expect((await post('/v1/optimize', small(), { WOBBLE_RATE_LIMITER: broken })).status).toBe(200);
    expect(console.error).toHaveBeenCalled();
  });

  it('keys token callers by a digest of their token, never the token itself', async () => {
    const limiter = countingLimiter(10);
    await post('/v1/optimize', small(), { WOBBLE_RATE_LIMITER: limiter, WOBBLE_API_TOKEN: 'the-secret-token' }, { ...json, authorization: 'Bearer the-secret-token' });
    expect(limiter.keys).toHaveLength(1);
    expect(limiter.keys[0]).toMatch(/^token:[0-9a-f]{16}$/);
    expect(limiter.keys[0]).not.toContain('secret');
  });
});
