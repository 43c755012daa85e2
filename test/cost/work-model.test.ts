import { describe, expect, it } from 'vitest';
import { effectiveMaxWork, priceRequest } from '../../src/cost/check.js';
import { memoryBreakdown, requestMemory } from '../../src/cost/memory-model.js';
import { requestShape } from '../../src/cost/request-shape.js';
import { groupUnits, optimizeBreakdown, requestWork, solveUnits, stressBreakdown, usesMean } from '../../src/cost/work-model.js';
import { LIMITS } from '../../src/schema/limits.js';
import { ProposalSchema, type ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { methodList } from '../../src/stress/problem.js';
import { optimizeProposal, stressProposal } from '../../src/stress/run.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

const shapeOf = (body: ProposalInput, draws?: number) => {
  const p = ProposalSchema.parse(body);
  return requestShape(p, methodList(p), draws);
};

function denseProposal(n: number, overrides: Partial<ProposalInput> = {}, value: (i: number, j: number) => number = (i, j) => (i === j ? 0.04 : 0.01)): ProposalInput {
  const assets = Array.from({ length: n }, (_, i) => `a${i}`);
  return {
    assets,
    weights: assets.map(() => 1 / n),
    inputs: { mean: assets.map(() => 0.005), covariance: assets.map((_, i) => assets.map((__, j) => value(i, j))), observations: 60, periodsPerYear: 12 },
    method: { name: 'mean-variance', riskAversion: 4 },
    ...overrides,
  };
}

describe('work model', () => {
  it('is a function of the shape only: the same counts for different numbers', () => {
    const a = shapeOf(historyProposal(60));
    const b = shapeOf(historyProposal(60, { weights: [0.4, 0.3, 0.2, 0.1] }));
    expect(requestWork('stress', a)).toBe(requestWork('stress', b));
    expect(requestWork('stress', a)).toBeGreaterThan(0);
  });

  it('charges optimize one solve per method — no draws, no channels', () => {
    const s = shapeOf(denseProposal(50));
    const o = optimizeBreakdown(s);
    expect(o.draws).toBe(0);
    expect(o.baseSolves).toBe(s.methods.reduce((t, m) => t + solveUnits(m, s), 0));
    // Stress at one draw pays the three channels of the methods that read the means on top.
    const st = stressBreakdown({ ...s, draws: 1 });
    const channels = s.methods.reduce((t, m) => t + (usesMean(m) ? 3 : 1) * solveUnits(m, s), 0);
    expect(st.draws).toBeGreaterThanOrEqual(channels);
    expect(requestWork('optimize', s)).toBeLessThan(requestWork('stress', { ...s, draws: 1 }));
  });

  it('charges a check against a baseline proposal for both runs', () => {
    const s = shapeOf(historyProposal(60));
    const b = shapeOf(historyProposal(60, { method: { name: 'minimum-variance' } }), s.draws);
    expect(requestWork('check', s, b)).toBe(requestWork('stress', s) + requestWork('stress', b));
    expect(requestWork('check', s)).toBe(requestWork('stress', s));
    expect(requestMemory('check', s, b)).toBeGreaterThan(requestMemory('check', s));
  });

  it('counts group limits in every QP solve', () => {
    const plain = shapeOf(denseProposal(40));
    const assets = Array.from({ length: 40 }, (_, i) => `a${i}`);
    const grouped = shapeOf(denseProposal(40, { constraints: { groups: Array.from({ length: 30 }, (_, g) => ({ name: `g${g}`, assets: assets.slice(g, g + 10), max: 0.5 })) } }));
    expect(grouped.groups).toBe(30);
    expect(grouped.groupMemberships).toBe(300);
    expect(groupUnits(grouped)).toBeGreaterThan(0);
    const mv = plain.methods[0];
    expect(solveUnits(mv, grouped)).toBe(solveUnits(mv, plain) + groupUnits(grouped));
  });

  it('a lower maximum from the deployment applies; a higher one is capped at the limit', () => {
    expect(effectiveMaxWork({ maxWork: 1e6 })).toBe(1e6);
    expect(effectiveMaxWork({ maxWork: 1e30 })).toBe(LIMITS.maxWorkUnits);
    expect(effectiveMaxWork({ maxWork: -1 })).toBe(LIMITS.maxWorkUnits);
    const s = shapeOf(historyProposal(60));
    expect(priceRequest('stress', s).over).toBeUndefined();
    expect(priceRequest('stress', s, { maxWork: 1000 }).over?.limit).toBe('maxWorkUnits');
  });
});

describe('limits are checked before the costly steps', () => {
  it('a large non-PSD covariance is refused for its cost (413) before any PSD test runs', () => {
    // 400 assets, correlations 0.9 with one −0.9 pair: not PSD. Priced for a stress run under a
    // deployment's low work maximum it is over, so validation answers with the limit, not with
    // the PSD problem (which it would only find by factorising the matrix).
    const n = 400;
    const body = denseProposal(n, {}, (i, j) => (i === j ? 1 : (i === 0 && j === 1) || (i === 1 && j === 0) ? -0.9 : 0.9));
    const priced = validateProposal(body, { job: 'stress', maxWork: 1e8 });
    expect(priced.ok).toBe(false);
    if (!priced.ok) {
      expect(priced.problems).toHaveLength(1);
      expect(priced.problems[0].kind).toBe('limit');
      expect(priced.problems[0].message).toMatch(/maxMemoryBytes|maxWorkUnits/);
    }
    // Validated alone it fits, and the PSD test finds the problem (no exact eigenvalue above 300 assets).
    const alone = validateProposal(body);
    expect(alone.ok).toBe(false);
    if (!alone.ok) expect(alone.problems[0].message).toMatch(/positive semi-definite: smallest eigenvalue is below −/);
  });

  it('run options pass a lower work maximum to optimize and stress', async () => {
    const v = validateProposal(momentsProposal({ resampling: { draws: 20, seed: 1 } }));
    if (!v.ok) throw new Error('invalid');
    await expect(stressProposal(v.proposal, v.warnings, { maxWork: 1000 })).rejects.toThrow(/maxWorkUnits/);
    await expect(optimizeProposal(v.proposal, v.warnings, { maxWork: 10 })).rejects.toThrow(/maxWorkUnits/);
    expect((await optimizeProposal(v.proposal, v.warnings, { maxWork: 1e9 })).methods.length).toBeGreaterThan(0);
  });

  it('memory: a dense 2000-asset stress is refused by its estimated peak, even at one draw', () => {
    const dense = shapeOf(denseProposal(2000, {}, () => 0), 1);
    expect(priceRequest('stress', dense).over).toBeDefined();
    expect(requestMemory('stress', dense)).toBeGreaterThan(LIMITS.maxMemoryBytes);
    expect(memoryBreakdown('stress', dense).matrices).toBeGreaterThan(4 * 2000 * 2000 * 8);
  });
});
