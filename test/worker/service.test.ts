import { env, SELF } from 'cloudflare:test';
import { describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import type { ServiceBindings } from '../../src/http/config.js';
import { ROUTES } from '../../src/http/routes/index.js';

// The service edge inside workerd. SELF is the Worker as wrangler.toml configures it (no token,
// the [[ratelimits]] binding); other configurations run the same app with a changed env, still
// inside the Workers runtime.
const BASE = 'http://wobble.test';
const json = { 'content-type': 'application/json' };
const app = createApp();
const withEnv = (path: string, init: RequestInit, extra: ServiceBindings) => app.fetch(new Request(BASE + path, init), { ...env, ...extra });

async function smallProposal(): Promise<Record<string, unknown>> {
  const demo = (await (await SELF.fetch(`${BASE}/v1/examples/demo`)).json()) as Record<string, unknown>;
  return { ...demo, compare: [{ name: 'minimum-variance' }], resampling: { draws: 10, seed: 'worker', scheme: 'iid-bootstrap' } };
}

describe('token (WOBBLE_API_TOKEN) in workerd', () => {
  it('off by default: a POST needs no token', async () => {
    const res = await SELF.fetch(`${BASE}/v1/optimize`, { method: 'POST', headers: json, body: JSON.stringify(await smallProposal()) });
    expect(res.status).toBe(200);
  });

  it('on: 401 problem+json with a challenge without the token, 200 with either rotated token, open routes stay open', async () => {
    const tokens = { WOBBLE_API_TOKEN: 'old-token-1234,new-token-5678' };
    const body = JSON.stringify(await smallProposal());
    const refused = await withEnv('/v1/optimize', { method: 'POST', headers: json, body }, tokens);
    expect(refused.status).toBe(401);
    expect(refused.headers.get('www-authenticate')).toBe('Bearer realm="wobble"');
    expect(refused.headers.get('content-type')).toContain('application/problem+json');
    const wrong = await withEnv('/v1/optimize', { method: 'POST', headers: { ...json, authorization: 'Bearer new-token-567' }, body }, tokens);
    expect(wrong.status).toBe(401);
    for (const token of ['old-token-1234', 'new-token-5678']) {
      const ok = await withEnv('/v1/optimize', { method: 'POST', headers: { ...json, authorization: `Bearer ${token}` }, body }, tokens);
      expect(ok.status, token).toBe(200);
    }
    for (const path of ['/', '/healthz', '/openapi.json', '/v1/schemas/report', '/v1/examples/demo']) {
      expect((await withEnv(path, {}, tokens)).status, path).toBe(200);
    }
  });
});

describe('CORS in workerd', () => {
  it('answers a preflight and marks simple responses for any origin by default', async () => {
    const pre = await SELF.fetch(`${BASE}/v1/stress`, {
      method: 'OPTIONS',
      headers: { origin: 'https://other.test', 'access-control-request-method': 'POST', 'access-control-request-headers': 'authorization,content-type' },
    });
    expect(pre.status).toBe(204);
    expect(pre.headers.get('access-control-allow-origin')).toBe('*');
    expect(pre.headers.get('access-control-allow-methods')).toBe('POST, OPTIONS');
    expect(pre.headers.get('access-control-allow-headers')).toMatch(/Authorization.*Content-Type/);
    expect(pre.headers.get('access-control-allow-credentials')).toBeNull();
    const simple = await SELF.fetch(`${BASE}/healthz`, { headers: { origin: 'https://other.test' } });
    expect(simple.headers.get('access-control-allow-origin')).toBe('*');
  });

  it('with WOBBLE_CORS_ORIGINS, only the listed origins', async () => {
    const origins = { WOBBLE_CORS_ORIGINS: 'https://reviews.example.org' };
    const preflight = (origin: string) => withEnv('/v1/check', { method: 'OPTIONS', headers: { origin, 'access-control-request-method': 'POST' } }, origins);
    expect((await preflight('https://reviews.example.org')).headers.get('access-control-allow-origin')).toBe('https://reviews.example.org');
    expect((await preflight('https://attacker.test')).headers.get('access-control-allow-origin')).toBeNull();
  });
});

describe('methods and headers in workerd', () => {
  it('405 with Allow on every route for a wrong method; 404 problem+json elsewhere', async () => {
    for (const route of ROUTES) {
      const path = route.path.replace('{name}', 'policy');
      const res = await SELF.fetch(BASE + path, { method: route.method === 'get' ? 'PUT' : 'GET' });
      expect(res.status, path).toBe(405);
      expect(res.headers.get('allow'), path).toBe(route.method === 'get' ? 'GET, HEAD, OPTIONS' : 'POST, OPTIONS');
    }
    const missing = await SELF.fetch(`${BASE}/v1/missing`);
    expect(missing.status).toBe(404);
    expect(missing.headers.get('content-type')).toContain('application/problem+json');
  });

  it('security headers and Cache-Control on every route, success and error', async () => {
    const seen: [string, Response][] = [];
    for (const route of ROUTES) {
      const path = route.path.replace('{name}', 'proposal');
      seen.push([path, route.method === 'get' ? await SELF.fetch(BASE + path) : await SELF.fetch(BASE + path, { method: 'POST', headers: json, body: '{}' })]);
    }
    seen.push(['404', await SELF.fetch(`${BASE}/nowhere`)]);
    for (const [what, res] of seen) {
      expect(res.headers.get('x-content-type-options'), what).toBe('nosniff');
      expect(res.headers.get('referrer-policy'), what).toBe('no-referrer');
      expect(res.headers.get('cache-control'), what).toMatch(/^(no-store|no-cache|public, max-age=\d+)$/);
      if (what !== '/') expect(res.headers.get('content-security-policy'), what).toContain("frame-ancestors 'none'");
    }
    const etag = seen.find(([p]) => p === '/openapi.json')![1].headers.get('etag');
    expect((await SELF.fetch(`${BASE}/openapi.json`, { headers: { 'if-none-match': etag! } })).status).toBe(304);
  });
});

describe('415 in workerd', () => {
  it('refuses text/plain, a missing type and undecoded encodings; decodes gzip', async () => {
    const body = JSON.stringify(await smallProposal());
    for (const headers of [{ 'content-type': 'text/plain' }, {}, { ...json, 'content-encoding': 'br' }] as Record<string, string>[]) {
      const res = await SELF.fetch(`${BASE}/v1/stress`, { method: 'POST', headers, body });
      expect(res.status, JSON.stringify(headers)).toBe(415);
      expect(res.headers.get('content-type')).toContain('application/problem+json');
    }
    const gzipped = await new Response(new Blob([body]).stream().pipeThrough(new CompressionStream('gzip'))).arrayBuffer();
    const res = await SELF.fetch(`${BASE}/v1/optimize`, { method: 'POST', headers: { ...json, 'content-encoding': 'gzip' }, body: gzipped });
    expect(res.status).toBe(200);
  });
});

describe('rate limiting and WOBBLE_MAX_WORK in workerd', () => {
  it('the rate-limiting binding refuses past its limit with 429 and Retry-After', async () => {
    // TIGHT_RATE_LIMITER: a real Miniflare rate-limiting binding, limit 2 per 60 s (test/vitest.workers.config.ts).
    const tight = { WOBBLE_RATE_LIMITER: env.TIGHT_RATE_LIMITER };
    const send = () => withEnv('/v1/stress', { method: 'POST', headers: { ...json, 'cf-connecting-ip': '198.51.100.7' }, body: '{}' }, tight);
    expect((await send()).status).toBe(400);
    expect((await send()).status).toBe(400);
    const limited = await send();
    expect(limited.status).toBe(429);
    expect(limited.headers.get('retry-after')).toBe('60');
    // Another client has its own count.
    const other = await withEnv('/v1/stress', { method: 'POST', headers: { ...json, 'cf-connecting-ip': '198.51.100.8' }, body: '{}' }, tight);
    expect(other.status).toBe(400);
  });

  it('a lowered work limit refuses with 413 before computing', async () => {
    const res = await withEnv('/v1/stress', { method: 'POST', headers: json, body: JSON.stringify(await smallProposal()) }, { WOBBLE_MAX_WORK: '1e3' });
    expect(res.status).toBe(413);
    expect(((await res.json()) as { detail: string }).detail).toContain('lowered on this deployment');
  });
});
