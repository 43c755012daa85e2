import { describe, expect, it } from 'vitest';
import { validateProposal } from '../../src/schema/validate.js';
import { demoProposal, momentsProposal } from '../helpers/proposals.js';

function problemsOf(body: unknown): { path: string; message: string; kind?: string }[] {
  const v = validateProposal(body);
  if (v.ok) throw new Error('expected problems, proposal was valid');
  return v.problems;
}

describe('validateProposal', () => {
  it('accepts the demo and a moments proposal', () => {
    expect(validateProposal(demoProposal()).ok).toBe(true);
    expect(validateProposal(momentsProposal()).ok).toBe(true);
  });

  it('reports a short weight vector at its path', () => {
    const p = problemsOf(momentsProposal({ weights: [0.5, 0.5] }));
    expect(p.map((x) => x.path)).toContain('weights');
    expect(p.find((x) => x.path === 'weights')?.message).toMatch(/expected 3 numbers/);
  });

  it('reports every problem at once', () => {
    const base = momentsProposal();
    const p = problemsOf({ ...base, assets: ['a', 'a', 'c'], weights: [0.5, 0.3, -0.2], inputs: { ...base.inputs, mean: [0.1, 0.1] } });
    const paths = p.map((x) => x.path);
    expect(paths).toEqual(expect.arrayContaining(['assets[1]', 'inputs.mean', 'weights', 'weights[2]']));
  });

  it('rejects unknown fields at any level, naming them', () => {
    expect(problemsOf({ ...momentsProposal(), resampeling: { draws: 10 } }).map((x) => x.path)).toContain('resampeling');
    expect(problemsOf({ ...momentsProposal(), constraints: { longonly: false } }).map((x) => x.path)).toContain('constraints.longonly');
  });

  it('names the wrong element inside the inputs union', () => {
    const base = momentsProposal();
    const inputs = { ...base.inputs, covariance: [[0.0225, 0.006, 0.0075], [0.006, 'x', 0.02], [0.0075, 0.02, 0.0625]] };
    expect(problemsOf({ ...base, inputs }).map((x) => x.path)).toContain('inputs.covariance[1][1]');
  });

  it('rejects an asymmetric covariance with the element', () => {
    const base = momentsProposal();
    const cov = structuredClone((base.inputs as { covariance: number[][] }).covariance);
    cov[0][2] += 0.001;
    const p = problemsOf({ ...base, inputs: { ...base.inputs, covariance: cov } });
    expect(p[0].path).toBe('inputs.covariance[0][2]');
    expect(p[0].message).toMatch(/symmetric/);
  });

  it('rejects a covariance that is not PSD with its smallest eigenvalue, or repairs it on request', () => {
    const base = momentsProposal();
    // Correlations 0.9, 0.9, −0.9 cannot coexist: the matrix has a negative eigenvalue (−0.8 exactly for unit variances).
    const cov = [
      [1, 0.9, 0.9],
      [0.9, 1, -0.9],
      [0.9, -0.9, 1],
    ];
    const p = problemsOf({ ...base, inputs: { ...base.inputs, covariance: cov } });
    expect(p[0].path).toBe('inputs.covariance');
    expect(p[0].message).toMatch(/-8\.0+e-1/);
    const repaired = validateProposal({ ...base, inputs: { ...base.inputs, covariance: cov }, estimation: { repairCovariance: true } });
    expect(repaired.ok).toBe(true);
    if (repaired.ok) expect(repaired.warnings.map((w) => w.code)).toContain('covariance-repaired');
  });

  it('rejects weights that do not sum to the budget, and negative long-only weights', () => {
    expect(problemsOf(momentsProposal({ weights: [0.5, 0.3, 0.3] }))[0].message).toMatch(/sum to the budget 1/);
    expect(problemsOf(momentsProposal({ weights: [0.9, 0.3, -0.2] })).map((x) => x.path)).toContain('weights[2]');
    expect(validateProposal(momentsProposal({ weights: [0.9, 0.3, -0.2], constraints: { longOnly: false } })).ok).toBe(true);
  });

  it('explains infeasible constraints as unsolvable (422), not malformed', () => {
    const p = problemsOf(momentsProposal({ constraints: { lower: [0.4, 0.4, 0.4] } }));
    expect(p[0]).toMatchObject({ path: 'constraints.lower', kind: 'unsolvable' });
    expect(p[0].message).toMatch(/lower bounds sum to 1\.2, above the budget 1/);
    const g = problemsOf(momentsProposal({ constraints: { upper: 0.5, groups: [{ name: 'ab', assets: ['a', 'b'], min: 1.1 }] } }));
    expect(g[0]).toMatchObject({ path: 'constraints.groups[0].min', kind: 'unsolvable' });
  });

  it('requires groups to name known assets', () => {
    const p = problemsOf(momentsProposal({ constraints: { groups: [{ name: 'g', assets: ['a', 'zz'], max: 0.5 }] } }));
    expect(p[0].path).toBe('constraints.groups[0].assets[1]');
  });

  it('names service limits as limits (413)', () => {
    const p = problemsOf(momentsProposal({ resampling: { draws: 1_000_000, seed: 1 } }));
    expect(p[0]).toMatchObject({ path: 'resampling.draws', kind: 'limit' });
  });

  it('checks method-specific rules', () => {
    expect(problemsOf(momentsProposal({ method: { name: 'mean-variance', riskAversion: { factor: 2, specific: 5 } } }))[0].path).toBe('method.riskAversion');
    expect(problemsOf(momentsProposal({ method: { name: 'risk-parity', budgets: [0.5, 0.5] } }))[0].path).toBe('method.budgets');
    expect(problemsOf(momentsProposal({ method: { name: 'kelly', fraction: 1.5 } }))[0].path).toBe('method.fraction');
  });

  it('rejects bootstrap schemes for moments inputs', () => {
    expect(problemsOf(momentsProposal({ resampling: { scheme: 'iid-bootstrap', seed: 1 } }))[0].path).toBe('resampling.scheme');
  });

  it('checks history shapes and factor rows', () => {
    const demo = demoProposal();
    const inputs = demo.inputs as { returns: number[][]; periodsPerYear: number };
    const returns = inputs.returns.map((r) => [...r]);
    returns[5] = returns[5].slice(1);
    expect(problemsOf({ ...demo, inputs: { ...inputs, returns } }).map((x) => x.path)).toContain('inputs.returns[5]');
    const factors = { names: ['f'], returns: inputs.returns.slice(1).map((r) => [r[0]]) };
    expect(problemsOf({ ...demo, inputs: { ...inputs, factors } }).map((x) => x.path)).toContain('inputs.factors.returns');
  });
});
