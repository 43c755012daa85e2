import { env, SELF } from 'cloudflare:test';
import { describe, expect, it } from 'vitest';
import { historyProposal } from '../helpers/proposals.js';
import { comparable } from '../scale/helpers.js';

// Real Durable Objects inside workerd (@cloudflare/vitest-pool-workers, wrangler.toml's STRESS_SHARD binding).
const post = (path: string, body: unknown) =>
  SELF.fetch(`http://wobble.test${path}`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });

describe('sharded stress in the Workers runtime', () => {
  it('gives the same report bytes with 1, 4 and 7 Durable Object shards as unsharded', async () => {
    const proposal = historyProposal(60, { resampling: { draws: 42, seed: 'workerd-shards' } });
    const whole = await post('/v1/stress', proposal);
    expect(whole.status).toBe(200);
    const expected = comparable((await whole.json()) as { meta: Record<string, unknown> });
    for (const shards of [1, 4, 7]) {
      const res = await post(`/v1/stress?shards=${shards}`, proposal);
      expect(res.status, await res.clone().text()).toBe(200);
      const report = (await res.json()) as { meta: Record<string, unknown> };
      expect(report.meta.shards).toBe(shards);
      expect(comparable(report)).toBe(expected);
    }
  });

  it('a Durable Object stops a running range when told to cancel', async () => {
    const proposal = historyProposal(120, { resampling: { draws: 2000, seed: 'workerd-cancel' } });
    const stub = env.STRESS_SHARD.get(env.STRESS_SHARD.newUniqueId());
    const running = stub.fetch('https://shard/range', {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ proposal, draws: 2000, seed: 'workerd-cancel', start: 0, end: 2000 }),
    });
    await new Promise((r) => setTimeout(r, 200));
    const cancel = await stub.fetch('https://shard/cancel', { method: 'POST' });
    expect(cancel.status).toBe(204);
    const res = await running;
    expect(res.status).toBe(409);
    const body = (await res.json()) as { detail: string };
    const [, done] = /cancelled after (\d+) of 2000 draws/.exec(body.detail) ?? [];
    expect(Number(done)).toBeLessThan(2000);
  });
});

