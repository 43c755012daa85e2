import { SELF } from 'cloudflare:test';
import { describe, expect, it } from 'vitest';

// Runs in workerd through @cloudflare/vitest-pool-workers: the same bundle as production.
describe('the Worker in the Workers runtime', () => {
  it('answers /healthz', async () => {
    const res = await SELF.fetch('http://wobble.test/healthz');
    expect(res.status).toBe(200);
    expect(await res.json()).toMatchObject({ status: 'ok' });
  });

  it('serves the proposal schema as JSON Schema 2020-12', async () => {
    const res = await SELF.fetch('http://wobble.test/v1/schemas/proposal');
    expect(res.status).toBe(200);
    const schema = (await res.json()) as { $schema: string; properties: Record<string, unknown> };
    expect(schema.$schema).toContain('2020-12');
    expect(Object.keys(schema.properties)).toContain('weights');
  });

  it('answers a bad proposal with problem+json naming the path', async () => {
    const demo = (await (await SELF.fetch('http://wobble.test/v1/examples/demo')).json()) as { weights: number[] };
    const res = await SELF.fetch('http://wobble.test/v1/stress', {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ ...demo, weights: demo.weights.slice(1) }),
    });
    expect(res.status).toBe(400);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
    const body = (await res.json()) as { errors: { path: string }[] };
    expect(body.errors.map((e) => e.path)).toContain('weights');
  });

  it('stresses the demo inside workerd', async () => {
    const demo = (await (await SELF.fetch('http://wobble.test/v1/examples/demo')).json()) as Record<string, unknown>;
    const res = await SELF.fetch('http://wobble.test/v1/stress', {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ ...demo, resampling: { draws: 30, seed: 'worker' } }),
    });
    expect(res.status).toBe(200);
    const report = (await res.json()) as { meta: { drawsCompleted: number }; methods: unknown[]; cautions: string[] };
    expect(report.meta.drawsCompleted).toBe(30);
    expect(report.methods).toHaveLength(6);
    expect(report.cautions.length).toBeGreaterThan(0);
  });

  it('answers malformed JSON with 400', async () => {
    const res = await SELF.fetch('http://wobble.test/v1/stress', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{"assets": [' });
    expect(res.status).toBe(400);
  });
});
