import { env, SELF } from 'cloudflare:test';
import { describe, expect, it, vi } from 'vitest';
import { createApp } from '../../src/http/app.js';
import type { ServiceBindings } from '../../src/http/config.js';
import { splitDraws } from '../../src/scale/ranges.js';
import { historyProposal } from '../helpers/proposals.js';
import { comparable } from '../scale/helpers.js';
import { faultyShards, settledStatus, shardStatus } from './shard-faults.js';

// Retry and cancellation of ranges inside workerd, with the real Durable Objects of wrangler.toml's
// STRESS_SHARD binding. The app runs in the same isolate with a changed env (./shard-faults.ts).
const BASE = 'http://wobble.test';
const app = createApp();
const post = (path: string, body: unknown, extra: ServiceBindings = {}, signal?: AbortSignal) =>
  app.fetch(new Request(BASE + path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body), signal }), { ...env, ...extra });
const doneOf = (detail: string): number => Number((/cancelled after (\d+) of/.exec(detail) ?? [])[1] ?? NaN);

describe('a shard that fails (workerd, real Durable Objects)', () => {
  const proposal = historyProposal(60, { resampling: { draws: 48, seed: 'workerd-retry' } });

  it('is retried once in a new object, and the report is byte-identical to an unsharded run', async () => {
    const ranges = splitDraws(48, 4);
    const { namespace, calls } = faultyShards(env.STRESS_SHARD as never, (start, attempt) => start === ranges[2].start && attempt === 1);
    const res = await post('/v1/stress?shards=4', proposal, { STRESS_SHARD: namespace });
    expect(res.status, await res.clone().text()).toBe(200);
    const whole = await post('/v1/stress', proposal);
    expect(comparable((await res.json()) as { meta: Record<string, unknown> })).toBe(comparable((await whole.json()) as { meta: Record<string, unknown> }));
    expect(calls.map((c) => `${c.start}:${c.attempt}${c.reset ? ' reset' : ''}`).sort()).toEqual(['0:1', '12:1', '24:1 reset', '24:2', '36:1']);
  });
});

describe('cancelling ranges (workerd)', () => {
  it('POST /v1/stress/range stops at its next chunk when its caller goes away', async () => {
    const proposal = historyProposal(120, { resampling: { draws: 2000, seed: 'workerd-range-cancel' } });
    const caller = new AbortController();
    const answer = post('/v1/stress/range', { proposal, draws: 2000, seed: 'workerd-range-cancel', start: 0, end: 2000 }, {}, caller.signal);
    await new Promise((resolve) => setTimeout(resolve, 300));
    caller.abort();
    const res = await answer;
    expect(res.status).toBe(409);
    const detail = ((await res.json()) as { detail: string }).detail;
    expect(detail).toMatch(/^cancelled after \d+ of 2000 draws \(its caller went away\)$/);
    console.info(`range route: stopped after ${doneOf(detail)} of 2000 draws`);
    expect(doneOf(detail)).toBeGreaterThan(0);
    expect(doneOf(detail)).toBeLessThan(2000);
  });

  it('unsharded POST /v1/stress and POST /v1/check stop at their next chunk when the client goes away', async () => {
    const proposal = historyProposal(120, { resampling: { draws: 5000, seed: 'workerd-unsharded-cancel' } });
    // 5000 draws (the limit) of a 4-asset history take over a second here; the client leaves after 0.2 s.
    const policy = { rules: [{ metric: 'turnover-from-proposal.p50', max: 0.5 }] };
    for (const [path, body] of [
      ['/v1/stress', proposal],
      ['/v1/check', { proposal, policy }],
    ] as const) {
      const caller = new AbortController();
      // Without the Durable Object binding the draws stay in this request (no automatic sharding).
      const answer = post(path, body, { STRESS_SHARD: undefined }, caller.signal);
      await new Promise((resolve) => setTimeout(resolve, 200));
      caller.abort();
      const res = await answer;
      expect(res.status, path).toBe(409);
      const detail = ((await res.json()) as { detail: string }).detail;
      expect(detail).toMatch(/^cancelled after \d+ of 5000 draws$/);
      console.info(`${path} unsharded: stopped after ${doneOf(detail)} of 5000 draws`);
      expect(doneOf(detail)).toBeLessThan(5000);
    }
  });

  it('POST /v1/stress/range through the runtime: once the caller aborts, no further chunk runs', async () => {
    // SELF is the Worker behind a service binding, so aborting the fetch is a real cancelled
    // request to workerd (not a signal handed to the app). workerd then drops the invocation at
    // its next await, i.e. the pause after the chunk in progress. The main Worker runs in this
    // isolate (@cloudflare/vitest-pool-workers), so the test counts its pauses through the global
    // setTimeout: they must stop growing once the caller has aborted. (Before the range route
    // paused between chunks, the whole range ran in one go and could not be stopped at all.)
    const realSetTimeout = globalThis.setTimeout;
    let pauses = 0;
    const spy = vi.spyOn(globalThis, 'setTimeout').mockImplementation(((callback: () => void, ms?: number) => {
      if (!ms) pauses++;
      return realSetTimeout(callback, ms);
    }) as typeof setTimeout);
    const wait = (ms: number) => new Promise((resolve) => realSetTimeout(resolve, ms));
    try {
      const proposal = historyProposal(120, { resampling: { draws: 2000, seed: 'workerd-self-cancel' } });
      const caller = new AbortController();
      const answer = SELF.fetch(`${BASE}/v1/stress/range`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({ proposal, draws: 2000, seed: 'workerd-self-cancel', start: 0, end: 2000 }),
        signal: caller.signal,
      }).catch((e: unknown) => e);
      for (let waited = 0; pauses < 2 && waited < 20_000; waited += 10) await wait(10);
      expect(pauses, 'the range runs in chunks with pauses between them').toBeGreaterThanOrEqual(2);
      const atAbort = pauses;
      caller.abort();
      expect(await answer).toBeInstanceOf(Error);
      // Were the range still running, each of these turns would let one more chunk (and pause) run.
      for (let turn = 0; turn < 10; turn++) await wait(0);
      await wait(500);
      console.info(`range via the runtime: ${atAbort} chunks begun when the caller aborted, ${pauses} after 10 turns and 0.5 s`);
      expect(pauses).toBeLessThanOrEqual(atAbort + 1);
    } finally {
      spy.mockRestore();
    }
  });

  it('a shard object stops when its /range subrequest is cancelled (no cancel message needed)', async () => {
    const proposal = historyProposal(120, { resampling: { draws: 2000, seed: 'workerd-subrequest-cancel' } });
    const stub = env.STRESS_SHARD.get(env.STRESS_SHARD.newUniqueId());
    const caller = new AbortController();
    const running = stub
      .fetch('https://shard/range', {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({ proposal, draws: 2000, seed: 'workerd-subrequest-cancel', start: 0, end: 2000 }),
        signal: caller.signal,
      })
      .catch((e: unknown) => e);
    await new Promise((resolve) => setTimeout(resolve, 300));
    const before = await shardStatus(stub);
    caller.abort();
    expect(await running).toBeInstanceOf(Error);
    const after = await settledStatus(stub);
    // The chunk in progress finishes (at most 50 draws, src/scale/range-job.ts), and the cancel
    // may take one more pause to arrive.
    console.info(`shard object: ${before.done} draws done when the caller cancelled, stopped after ${after.done} of 2000`);
    expect(after).toMatchObject({ state: 'cancelled', start: 0, end: 2000, status: 409 });
    expect(after.done).toBeLessThan(2000);
    expect(after.done).toBeGreaterThanOrEqual(before.done);
    expect(after.done - before.done).toBeLessThanOrEqual(100);
  });

  it('when a shard fails twice: problem+json naming it, and the other shards are stopped mid-range', async () => {
    const proposal = historyProposal(120, { resampling: { draws: 1200, seed: 'workerd-fail-twice' } });
    const ranges = splitDraws(1200, 4);
    const { namespace, calls } = faultyShards(env.STRESS_SHARD as never, (start) => start === ranges[1].start);
    const res = await post('/v1/stress?shards=4', proposal, { STRESS_SHARD: namespace });
    expect(res.status).toBe(502);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
    const problem = (await res.json()) as { detail: string; methods?: unknown };
    expect(problem.detail).toMatch(/^shard 1 \(draws 300–599\) failed on 2 attempts: .*reset/);
    expect(problem.methods).toBeUndefined();
    const others = calls.filter((c) => c.start !== ranges[1].start);
    expect(others).toHaveLength(3);
    const statuses = await Promise.all(others.map((c) => settledStatus(c.stub)));
    console.info(`other shards stopped after ${statuses.map((s) => `${s.done}/${(s.end ?? 0) - (s.start ?? 0)}`).join(', ')} draws`);
    for (const status of statuses) {
      expect(status.state).toBe('cancelled');
      expect(status.done).toBeLessThan(300);
    }
  });

  it('when the client of a sharded request goes away, every shard stops mid-range', async () => {
    // 3 × 1000 draws: each shard is far from its end 200 ms after it started (500 a shard finished on a quiet machine).
    const perShard = 1000;
    const proposal = historyProposal(120, { resampling: { draws: 3 * perShard, seed: 'workerd-client-gone' } });
    const { namespace, calls } = faultyShards(env.STRESS_SHARD as never);
    const client = new AbortController();
    const answer = post('/v1/stress?shards=3', proposal, { STRESS_SHARD: namespace }, client.signal);
    while (calls.length < 3) await new Promise((resolve) => setTimeout(resolve, 20));
    await new Promise((resolve) => setTimeout(resolve, 200));
    client.abort();
    expect((await answer).status).toBe(409);
    const statuses = await Promise.all(calls.map((c) => settledStatus(c.stub)));
    console.info(`shards stopped after ${statuses.map((s) => `${s.done}/${perShard}`).join(', ')} draws`);
    for (const status of statuses) {
      expect(status.state).toBe('cancelled');
      expect(status.done).toBeLessThan(perShard);
    }
  });
});
