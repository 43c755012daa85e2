import { describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { LIMITS } from '../../src/schema/limits.js';
import { ReportSchema } from '../../src/schema/report.js';
import { demoProposal, historyProposal, momentsProposal } from '../helpers/proposals.js';

const app = createApp();
const post = (path: string, body: unknown, headers: Record<string, string> = { 'content-type': 'application/json' }) =>
  app.request(path, { method: 'POST', headers, body: typeof body === 'string' ? body : JSON.stringify(body) });

describe('HTTP routes (Hono app.request, no server)', () => {
  it('GET /healthz', async () => {
    const res = await app.request('/healthz');
    expect(res.status).toBe(200);
    expect(await res.json()).toMatchObject({ status: 'ok' });
  });

  it('GET /v1/schemas/:name serves each schema and 404s unknown names as problem+json', async () => {
    for (const name of ['proposal', 'report', 'policy']) {
      const res = await app.request(`/v1/schemas/${name}`);
      expect(res.status).toBe(200);
      expect(((await res.json()) as { $schema: string }).$schema).toContain('2020-12');
    }
    const res = await app.request('/v1/schemas/nope');
    expect(res.status).toBe(404);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
  });

  it('GET /openapi.json is OpenAPI 3.1 with the contract paths', async () => {
    const doc = (await (await app.request('/openapi.json')).json()) as { openapi: string; paths: Record<string, unknown> };
    expect(doc.openapi).toBe('3.1.0');
    expect(Object.keys(doc.paths)).toEqual(expect.arrayContaining(['/v1/optimize', '/v1/stress', '/v1/check', '/healthz']));
  });

  it('GET /v1/examples/demo returns the demo proposal', async () => {
    expect(await (await app.request('/v1/examples/demo')).json()).toEqual(demoProposal());
  });

  it('400 for malformed JSON, an empty body, and schema violations with paths', async () => {
    expect((await post('/v1/stress', '{"assets":')).status).toBe(400);
    expect((await post('/v1/stress', '')).status).toBe(400);
    const res = await post('/v1/stress', momentsProposal({ weights: [1] }));
    expect(res.status).toBe(400);
    const body = (await res.json()) as { status: number; errors: { path: string; pointer: string }[] };
    expect(body.status).toBe(400);
    expect(body.errors[0]).toMatchObject({ path: 'weights', pointer: '/weights' });
  });

  it('413 over the body-size limit, whether or not Content-Length is declared', async () => {
    const big = 'x'.repeat(LIMITS.maxBodyBytes + 10);
    expect((await post('/v1/stress', big)).status).toBe(413);
    expect((await post('/v1/stress', '{}', { 'content-type': 'application/json', 'content-length': String(LIMITS.maxBodyBytes + 1) })).status).toBe(413);
  });

  it('413 over a count limit, naming the limit', async () => {
    const res = await post('/v1/stress', momentsProposal({ resampling: { draws: LIMITS.maxDraws + 1, seed: 1 } }));
    expect(res.status).toBe(413);
    expect(((await res.json()) as { detail: string }).detail).toContain(String(LIMITS.maxDraws));
  });

  it('POST /v1/optimize returns every method with its base optimum', async () => {
    const res = await post('/v1/optimize', momentsProposal());
    expect(res.status).toBe(200);
    const body = (await res.json()) as { methods: { method: { name: string }; base: { weights: number[] } }[]; cautions: string[] };
    expect(body.methods).toHaveLength(6);
    expect(body.methods[0].method.name).toBe('mean-variance');
    expect(body.cautions.length).toBeGreaterThan(0);
  });

  it('POST /v1/stress returns a schema-valid report, and HTML or markdown on request', async () => {
    const res = await post('/v1/stress', historyProposal());
    expect(res.status).toBe(200);
    const report = ReportSchema.parse(await res.json());
    expect(report.meta.drawsRequested).toBe(120);
    const html = await post('/v1/stress?format=html', historyProposal());
    expect(html.headers.get('content-type')).toContain('text/html');
    expect(await html.text()).toContain('<html');
    const md = await post('/v1/stress?format=markdown', historyProposal());
    expect(await md.text()).toMatch(/^#/m);
    expect((await post('/v1/stress?format=pdf', historyProposal())).status).toBe(400);
  });

  it('POST /v1/check answers 200 with a verdict whether the gate passes or fails', async () => {
    const pass = await post('/v1/check', { proposal: historyProposal(), policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 1 }] } });
    expect(pass.status).toBe(200);
    expect(((await pass.json()) as { verdict: { pass: boolean } }).verdict.pass).toBe(true);
    const fail = await post('/v1/check', { proposal: historyProposal(), policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] } });
    expect(fail.status).toBe(200);
    expect(((await fail.json()) as { verdict: { pass: boolean } }).verdict.pass).toBe(false);
  });

  it('POST /v1/check names bad fields under proposal and policy, and accepts a proposal as baseline', async () => {
    const bad = await post('/v1/check', { proposal: { ...historyProposal(), weights: [1] }, policy: { rules: [{ metric: 'nope', max: 1 }] } });
    expect(bad.status).toBe(400);
    const errors = ((await bad.json()) as { errors: { path: string }[] }).errors.map((e) => e.path);
    expect(errors).toContain('policy.rules[0].metric');
    const badProposal = await post('/v1/check', { proposal: { ...historyProposal(), weights: [1] }, policy: { rules: [{ metric: 'max-weight-sd', max: 1 }] } });
    expect(((await badProposal.json()) as { errors: { path: string }[] }).errors[0].path).toBe('proposal.weights');
    const withBaseline = await post('/v1/check', {
      proposal: historyProposal(),
      baseline: historyProposal(),
      policy: { rules: [{ metric: 'max-weight-sd', maxIncrease: 0 }] },
    });
    expect(withBaseline.status).toBe(200);
    const verdict = ((await withBaseline.json()) as { verdict: { pass: boolean; rules: { value: number }[] } }).verdict;
    // Same proposal, same seed: common random numbers make the change exactly 0.
    expect(verdict.rules[0].value).toBe(0);
    expect(verdict.pass).toBe(true);
    const noBaseline = await post('/v1/check', { proposal: historyProposal(), policy: { rules: [{ metric: 'max-weight-sd', maxIncrease: 0 }] } });
    expect(noBaseline.status).toBe(422);
  });

  it('GET / serves the reviewer page with the cautions', async () => {
    const res = await app.request('/');
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('id="proposal"');
    expect(html).toMatch(/not investment advice/i);
  });

  it('422 for infeasible constraints', async () => {
    const res = await post('/v1/optimize', momentsProposal({ constraints: { upper: 0.2 } }));
    expect(res.status).toBe(422);
    expect(((await res.json()) as { detail: string }).detail).toMatch(/upper bounds sum to 0\.6/);
  });

  it('415 for a non-JSON content type, 404 problem+json for unknown routes', async () => {
    expect((await post('/v1/stress', 'a=b', { 'content-type': 'application/x-www-form-urlencoded' })).status).toBe(415);
    const res = await app.request('/v2/nothing');
    expect(res.status).toBe(404);
    expect(res.headers.get('content-type')).toContain('application/problem+json');
  });

  it('never answers 500 for odd bodies', async () => {
    for (const body of ['null', '[]', '"x"', '42', '{"assets":null}', JSON.stringify({ ...momentsProposal(), inputs: null })]) {
      const res = await post('/v1/stress', body);
      expect(res.status, body).toBeGreaterThanOrEqual(400);
      expect(res.status, body).toBeLessThan(500);
    }
  });
});
