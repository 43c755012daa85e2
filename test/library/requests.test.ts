import { describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { check, optimize, stress, validateProposal, WobbleProblemError, type Report } from '../../src/index.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

// The library must answer exactly as the service does: same JSON for the same request, and the
// service's problem+json (status, errors[].path) as a typed error.
const app = createApp();
async function post(path: string, body: unknown) {
  const res = await app.request(path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  return { status: res.status, json: (await res.json()) as Record<string, unknown> };
}
const withoutElapsed = (r: unknown) => {
  const o = r as { meta: Record<string, unknown> };
  return { ...o, meta: { ...o.meta, elapsedMs: 0 } };
};
const small = () => historyProposal(60, { resampling: { draws: 30, seed: 'lib', scheme: 'stationary-bootstrap' } });

async function rejection(p: Promise<unknown>): Promise<WobbleProblemError> {
  const e = await p.then(
    () => undefined,
    (err: unknown) => err,
  );
  expect(e).toBeInstanceOf(WobbleProblemError);
  return e as WobbleProblemError;
}

describe('library = HTTP routes', () => {
  it('optimize returns the JSON of POST /v1/optimize', async () => {
    const http = await post('/v1/optimize', momentsProposal());
    expect(http.status).toBe(200);
    expect(withoutElapsed(await optimize(momentsProposal()))).toEqual(withoutElapsed(http.json));
  });

  it('stress returns the JSON of POST /v1/stress (byte for byte apart from elapsedMs)', async () => {
    const http = await post('/v1/stress', small());
    expect(http.status).toBe(200);
    const report: Report = await stress(small());
    expect(JSON.stringify(withoutElapsed(report))).toBe(JSON.stringify(withoutElapsed(http.json)));
  });

  it('check returns the JSON of POST /v1/check, a failed gate being a verdict and not an error', async () => {
    const body = { proposal: small(), policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] } };
    const http = await post('/v1/check', body);
    const report = await check(body);
    expect(report.verdict?.pass).toBe(false);
    expect(withoutElapsed(report)).toEqual(withoutElapsed(http.json));
  });

  it('stress options override draws and seed', async () => {
    const report = await stress(momentsProposal(), { draws: 12, seed: 7 });
    expect(report.meta.drawsRequested).toBe(12);
    expect(report.meta.seed).toBe(7);
  });

  it('an invalid proposal is the same problem as the service gives (status, detail, errors[].path)', async () => {
    const bad = { ...momentsProposal(), weights: [0.5, 0.5] };
    const http = await post('/v1/stress', bad);
    const e = await rejection(stress(bad));
    expect(e.status).toBe(http.status);
    expect(e.status).toBe(400);
    expect(e.errors.map((p) => p.path)).toEqual((http.json.errors as { path: string }[]).map((p) => p.path));
    expect(e.errors[0].path).toBe('weights');
    expect(e.problem).toEqual(http.json);
    expect(validateProposal(bad).ok).toBe(false);
  });

  it('check: problems inside the envelope carry the proposal. prefix; a missing policy is named', async () => {
    const bad = await rejection(check({ proposal: { ...momentsProposal(), weights: [1] }, policy: { rules: [{ metric: 'outside-band-share', max: 1 }] } }));
    expect(bad.errors[0].path).toBe('proposal.weights');
    const noPolicy = await rejection(check({ proposal: momentsProposal() }));
    expect(noPolicy.errors[0].path).toBe('policy');
    const unknownField = await rejection(check({ proposal: momentsProposal(), policy: { rules: [{ metric: 'max-weight-sd', max: 1 }] }, extra: 1 } as never));
    expect(unknownField.status).toBe(400);
  });

  it('an unsolvable request is a 422 problem, as from the service', async () => {
    const infeasible = momentsProposal({ constraints: { lower: 0.5 } });
    const http = await post('/v1/optimize', infeasible);
    const e = await rejection(optimize(infeasible));
    expect(e.status).toBe(422);
    expect(http.status).toBe(422);
    expect(e.detail).toBe(http.json.detail);
  });
});
