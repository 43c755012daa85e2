import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createClient, WobbleProblemError, WobbleTimeoutError } from '../../src/client/index.js';
import { createApp } from '../../src/http/app.js';
import { demoProposal, historyProposal, momentsProposal } from '../helpers/proposals.js';

// The client against the real service over real HTTP (the Hono app on @hono/node-server, port 0).
// Two wrappers around the app exercise what a deployment adds: /auth/* requires a bearer token
// (answering 401 problem+json otherwise), /slow/* answers only after 3 s.
const app = createApp();
const TOKEN = 'test-token-123';

async function service(request: Request): Promise<Response> {
  const url = new URL(request.url);
  if (url.pathname.startsWith('/slow/')) {
    await new Promise((resolve) => setTimeout(resolve, 3000));
    return new Response('{}', { headers: { 'content-type': 'application/json' } });
  }
  if (url.pathname.startsWith('/auth/')) {
    if (request.headers.get('authorization') !== `Bearer ${TOKEN}`) {
      return new Response(JSON.stringify({ type: 'https://wobble.invalid/problems/unauthorized', title: 'Unauthorized', status: 401, detail: 'send Authorization: Bearer <token>' }), {
        status: 401,
        headers: { 'content-type': 'application/problem+json' },
      });
    }
    url.pathname = url.pathname.slice('/auth'.length);
    return app.fetch(new Request(url, request));
  }
  return app.fetch(request);
}

let server: ServerType;
let baseUrl = '';
beforeAll(async () => {
  const port = await new Promise<number>((resolve) => {
    server = serve({ fetch: service, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve(info.port));
  });
  baseUrl = `http://127.0.0.1:${port}`;
});
afterAll(async () => {
  await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
});

async function rejection(p: Promise<unknown>): Promise<unknown> {
  return p.then(
    () => {
      throw new Error('expected a rejection');
    },
    (e: unknown) => e,
  );
}

describe('wobble/client against the service', () => {
  it('health, demo, schema, optimize, stress and check return the service JSON', async () => {
    const client = createClient({ baseUrl: `${baseUrl}/` });
    expect((await client.health()).status).toBe('ok');
    expect(await client.demo()).toEqual(demoProposal());
    expect((await client.schema('policy')).$schema).toContain('2020-12');
    const optimum = await client.optimize(momentsProposal());
    expect(optimum.methods).toHaveLength(6);
    const proposal = historyProposal(60, { resampling: { draws: 25, seed: 'client', scheme: 'iid-bootstrap' } });
    const report = await client.stress(proposal);
    expect(report.meta.drawsCompleted).toBe(25);
    expect(await client.stressRendered(proposal, 'markdown')).toContain('#');
    const judged = await client.check({ proposal, policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] } });
    expect(judged.verdict?.pass).toBe(false);
  });

  it('problem+json becomes a WobbleProblemError with status and errors[].path', async () => {
    const client = createClient({ baseUrl });
    const e = await rejection(client.stress({ ...momentsProposal(), weights: [0.5, 0.5] }));
    expect(e).toBeInstanceOf(WobbleProblemError);
    const problem = e as WobbleProblemError;
    expect(problem.status).toBe(400);
    expect(problem.errors.map((p) => p.path)).toContain('weights');
    expect(problem.errors[0].pointer).toBe('/weights');
    expect(problem.message).toContain('weights');
    const unsolvable = (await rejection(client.optimize(momentsProposal({ constraints: { lower: 0.5 } })))) as WobbleProblemError;
    expect(unsolvable.status).toBe(422);
    const notFound = (await rejection(client.schema('nope' as 'policy'))) as WobbleProblemError;
    expect(notFound.status).toBe(404);
  });

  it('sends the bearer token; without it the 401 problem is typed', async () => {
    const withToken = createClient({ baseUrl: `${baseUrl}/auth`, token: TOKEN });
    expect((await withToken.health()).status).toBe('ok');
    const without = (await rejection(createClient({ baseUrl: `${baseUrl}/auth` }).health())) as WobbleProblemError;
    expect(without).toBeInstanceOf(WobbleProblemError);
    expect(without.status).toBe(401);
    expect(without.errors).toEqual([]);
  });

  it('a timeout rejects with WobbleTimeoutError; an abort signal rejects with its reason', async () => {
    const client = createClient({ baseUrl: `${baseUrl}/slow`, timeoutMs: 200 });
    const started = Date.now();
    expect(await rejection(client.health())).toBeInstanceOf(WobbleTimeoutError);
    expect(Date.now() - started).toBeLessThan(2500);
    const controller = new AbortController();
    const reason = new Error('caller gave up');
    const pending = createClient({ baseUrl: `${baseUrl}/slow`, timeoutMs: 0 }).health({ signal: controller.signal });
    setTimeout(() => controller.abort(reason), 100);
    expect(await rejection(pending)).toBe(reason);
    const already = new AbortController();
    already.abort(reason);
    expect(await rejection(client.health({ signal: already.signal }))).toBe(reason);
  });

  it('refuses a base URL that is not http(s)', () => {
    expect(() => createClient({ baseUrl: 'localhost:8787' })).toThrow(/http/);
  });
});
