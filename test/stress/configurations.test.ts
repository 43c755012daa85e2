import { describe, expect, it } from 'vitest';
import { ReportSchema } from '../../src/schema/report.js';
import { validateProposal } from '../../src/schema/validate.js';
import { stressProposal } from '../../src/stress/run.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

// Every input form, estimator, scheme and method option through the whole stress path: a
// schema-valid report, no failed draws, and base optima inside the caller's constraints.
const h = historyProposal(80);
const rows = (h.inputs as { returns: number[][] }).returns;
const factors = { names: ['mkt', 'spread'], returns: rows.map((r) => [r.reduce((a, b) => a + b, 0) / 4, r[0] - r[3]]) };
const cases: [string, unknown][] = [
  ['regression factor model with separate risk aversion', { ...h, inputs: { ...(h.inputs as object), factors }, estimation: { factorModel: 'regression' }, method: { name: 'mean-variance', riskAversion: { factor: 3, specific: 8 } } }],
  ['PCA factor model', { ...h, estimation: { factorModel: 'pca', pcaFactors: 2 } }],
  ['EWMA covariance', { ...h, estimation: { covariance: 'ewma', ewmaDecay: 0.97 } }],
  ['Ledoit–Wolf constant correlation', { ...h, estimation: { covariance: 'ledoit-wolf-constant-correlation' } }],
  ['views with their own standard errors', { ...h, views: { mean: [0.01, 0.004, 0.003, 0.002], stdErr: [0.002, 0.002, 0.002, 0.002] } }],
  ['iid bootstrap', { ...h, resampling: { draws: 60, scheme: 'iid-bootstrap', seed: 1 } }],
  ['parametric noise around an estimated history', { ...h, resampling: { draws: 60, scheme: 'parametric', seed: 1 } }],
  [
    'a supplied factor model (EX4F of the references)',
    {
      assets: ['a', 'b', 'c', 'd'],
      weights: [0.25, 0.25, 0.25, 0.25],
      inputs: {
        mean: [0.06, 0.05, 0.07, 0.04],
        factorModel: { factors: ['f1', 'f2'], loadings: [[1, 0.2], [0.9, -0.3], [1.1, 0.5], [0.8, 0]], factorCovariance: [[0.04, 0.002], [0.002, 0.01]], specificVariance: [0.01, 0.02, 0.015, 0.03] },
        observations: 60,
        periodsPerYear: 1,
      },
      method: { name: 'mean-variance', riskAversion: { factor: 4, specific: 10 } },
      resampling: { draws: 60, seed: 2 },
    },
  ],
  ['short positions with bounds', { ...momentsProposal({ constraints: { longOnly: false, lower: -0.5, upper: 1.5 } }), weights: [0.6, 0.6, -0.2] }],
  ['bounds and a two-sided group', { ...h, constraints: { upper: 0.6, groups: [{ name: 'g', assets: ['w', 'x'], min: 0.3, max: 0.5 }] } }],
  ['risk parity with budgets', { ...h, method: { name: 'risk-parity', budgets: [4, 3, 2, 1] } }],
  ['half Kelly', { ...h, method: { name: 'kelly', fraction: 0.5 } }],
];

describe('stress across configurations', () => {
  it.each(cases)('%s', async (_name, proposal) => {
    const v = validateProposal(proposal);
    if (!v.ok) throw new Error(JSON.stringify(v.problems));
    const r = ReportSchema.parse(await stressProposal(v.proposal, v.warnings, { draws: 40 }));
    expect(r.meta.failedDraws).toBe(0);
    const c = v.proposal.constraints;
    for (const m of r.methods) {
      const w = m.base.weights;
      expect(Math.abs(w.reduce((a, b) => a + b, 0) - (m.method.name === 'risk-parity' ? 1 : (c?.budget ?? 1)))).toBeLessThan(1e-9);
      if (['mean-variance', 'minimum-variance', 'kelly'].includes(m.method.name) && c?.groups) {
        const g = w[0] + w[1];
        expect(g).toBeGreaterThanOrEqual(0.3 - 1e-9);
        expect(g).toBeLessThanOrEqual(0.5 + 1e-9);
      }
    }
  });

  it('reproduces the factor-form mean-variance optimum of the references (EX4F, λ_f = 4, λ_s = 10)', async () => {
    const v = validateProposal(cases[7][1]);
    if (!v.ok) throw new Error('invalid');
    const r = await stressProposal(v.proposal, v.warnings, { draws: 20 });
    // REFERENCES.md, factor form (computed): w = (0.383650128362, 0.248291923166, 0.196069786818, 0.171988161654).
    const expected = [0.383650128362, 0.248291923166, 0.196069786818, 0.171988161654];
    r.methods[0].base.weights.forEach((w, i) => expect(w).toBeCloseTo(expected[i], 10));
    expect(r.methods[0].base.factorRiskShare?.factor).toBeGreaterThan(0);
  });
});
