import { describe, expect, it } from 'vitest';
import { remoteRunner } from '../../src/cli/remote.js';
import { createApp } from '../../src/http/app.js';
import type { ServiceBindings } from '../../src/http/config.js';
import type { ShardNamespace } from '../../src/http/shards.js';
import { PARTIAL_MEDIA_TYPE } from '../../src/scale/wire.js';
import { decodePartial } from '../../src/scale/wire.js';
import { StressShard } from '../../src/shard-object.js';
import { stressProposal } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';
import { comparable, valid } from '../scale/helpers.js';

const app = createApp();

/**
 * A stand-in for the Durable Object namespace (Node has no workerd): each id is a fresh
 * StressShard instance, reached through the same fetch interface. test/worker/ runs the real thing.
 */
function namespace(hooks: { before?: (call: { id: number; path: string }) => Response | undefined } = {}) {
  let next = 0;
  const calls: { id: number; path: string; status?: number }[] = [];
  const ns: ShardNamespace = {
    newUniqueId: () => next++,
    get: (id: never) => {
      const object = new StressShard(undefined, undefined);
      return {
        fetch: async (input: string, init?: RequestInit) => {
          const call: { id: number; path: string; status?: number } = { id, path: new URL(input).pathname };
          calls.push(call);
          const early = hooks.before?.(call);
          const response = early ?? (await object.fetch(new Request(input, init)));
          call.status = response.status;
          return response;
        },
      };
    },
  };
  return { env: { STRESS_SHARD: ns }, calls };
}

const post = (path: string, body: unknown, env?: ServiceBindings, signal?: AbortSignal) =>
  app.request(path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body), signal }, env);

describe('POST /v1/stress?shards=N (Durable Object stand-ins in Node)', () => {
  const proposal = historyProposal(60, { resampling: { draws: 50, seed: 'http-shards' } });

  it('gives the same report bytes with 1, 4 and 7 shards as unsharded', async () => {
    const whole = await post('/v1/stress', proposal);
    expect(whole.status).toBe(200);
    const expected = comparable(await whole.json());
    for (const shards of [1, 4, 7]) {
      const { env, calls } = namespace();
      const res = await post(`/v1/stress?shards=${shards}`, proposal, env);
      expect(res.status).toBe(200);
      const report = await res.json();
      expect(report.meta.shards).toBe(shards);
      expect(comparable(report)).toBe(expected);
      expect(calls.filter((c) => c.path === '/range')).toHaveLength(shards);
    }
  });

  it('retries a failed shard once (in a new object) and reports exactly', async () => {
    let failed = false;
    const { env, calls } = namespace({
      before: (call) => {
        if (call.path === '/range' && call.id === 2 && !failed) {
          failed = true;
          return new Response('worker exceeded its memory', { status: 503 });
        }
        return undefined;
      },
    });
    const res = await post('/v1/stress?shards=4', proposal, env);
    expect(res.status).toBe(200);
    expect(calls.filter((c) => c.path === '/range')).toHaveLength(5);
    expect(comparable(await res.json())).toBe(comparable(await (await post('/v1/stress', proposal)).json()));
  });

  it('fails with problem+json naming the shard when its retry fails too — never a report from part of the draws', async () => {
    const { env } = namespace({
      before: (call) => (call.path === '/range' && (call.id === 1 || call.id >= 4) ? new Response('boom', { status: 500 }) : undefined),
    });
    const res = await post('/v1/stress?shards=4', proposal, env);
    expect(res.status).toBe(502);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
    const body = await res.json();
    expect(body.detail).toMatch(/^shard 1 \(draws 12–24\) failed on 2 attempts: shard 1 \(attempt 2\) answered 500: boom/);
    expect(body.methods).toBeUndefined();
  });

  it('stops every shard when the client goes away', async () => {
    const big = historyProposal(120, { resampling: { draws: 1500, seed: 'cancel' } });
    const client = new AbortController();
    let started = 0;
    // The client goes away just after the third shard has started (each has 500 draws to do).
    const { env, calls } = namespace({
      before: (call) => {
        if (call.path === '/range' && ++started === 3) setTimeout(() => client.abort(), 20);
        return undefined;
      },
    });
    const res = await post('/v1/stress?shards=3', big, env, client.signal);
    expect(res.status).toBe(409);
    // Each object hears the cancel at its next chunk of draws and answers 409 instead of a partial.
    const ranges = calls.filter((c) => c.path === '/range');
    for (let waited = 0; waited < 30_000 && ranges.some((c) => c.status === undefined); waited += 50) await new Promise((r) => setTimeout(r, 50));
    expect(calls.filter((c) => c.path === '/cancel')).toHaveLength(ranges.length);
    expect(ranges.every((c) => c.status === 409)).toBe(true);
  });

  it('refuses a bad shards value (400) and sharding without the binding (501)', async () => {
    expect((await post('/v1/stress?shards=0', proposal, namespace().env)).status).toBe(400);
    expect((await post('/v1/stress?shards=x', proposal, namespace().env)).status).toBe(400);
    const res = await post('/v1/stress?shards=2', proposal);
    expect(res.status).toBe(501);
    expect((await res.json()).detail).toMatch(/STRESS_SHARD/);
  });
});

describe('POST /v1/stress/range', () => {
  const proposal = valid(historyProposal(60, { resampling: { draws: 30, seed: 'range' } })).proposal;

  it('answers the binary partial of one range', async () => {
    const res = await post('/v1/stress/range', { proposal, draws: 30, seed: 'range', start: 10, end: 20 });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toBe(PARTIAL_MEDIA_TYPE);
    const partial = decodePartial(new Uint8Array(await res.arrayBuffer()));
    expect([partial.header.start, partial.header.end, partial.header.draws]).toEqual([10, 20, 30]);
  });

  it('answers problem+json with JSON paths for a bad range or proposal', async () => {
    const bad = await post('/v1/stress/range', { proposal, draws: 30, seed: 'range', start: 20, end: 10 });
    expect(bad.status).toBe(400);
    expect((await bad.json()).errors[0].path).toBe('end');
    const invalid = await post('/v1/stress/range', { proposal: { ...proposal, weights: proposal.weights.slice(1) }, draws: 30, seed: 1, start: 0, end: 5 });
    expect(invalid.status).toBe(400);
    expect((await invalid.json()).errors.map((e: { path: string }) => e.path)).toContain('proposal.weights');
  });

  it('is what the CLI --remote fan-out calls, with the same merge and report', async () => {
    const v = valid(historyProposal(60, { resampling: { draws: 30, seed: 'remote' } }));
    const seen: string[] = [];
    const fetchThroughApp = (async (url: string | URL | Request, init?: RequestInit) => {
      seen.push(String(url));
      expect(new Headers(init?.headers).get('authorization')).toBe('Bearer secret-token');
      return app.request(String(url), init);
    }) as typeof fetch;
    const report = await stressProposal(v.proposal, v.warnings, { drawRunner: remoteRunner('https://wobble.test/', 3, 'secret-token', { fetchImpl: fetchThroughApp }) });
    expect(report.meta.shards).toBe(3);
    expect(seen).toEqual(Array(3).fill('https://wobble.test/v1/stress/range'));
    expect(comparable(report)).toBe(comparable(await stressProposal(v.proposal, v.warnings)));
  });
});
