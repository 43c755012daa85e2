import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';
import { meanVariance, meanVarianceProblem } from '../../src/optimize/mean-variance.js';
import { OptimizationError, type ConstraintSet } from '../../src/optimize/types.js';

// Invented three-asset inputs (per period) for behaviour checks; published values are in
// test/reference/markowitz.test.ts.
const model: DenseRiskModel = {
  kind: 'dense',
  n: 3,
  cov: Float64Array.from([0.04, 0.006, 0.002, 0.006, 0.09, 0.01, 0.002, 0.01, 0.16]),
};
const mean = Float64Array.from([0.05, 0.08, 0.12]);
const longOnly: ConstraintSet = { n: 3, lower: new Float64Array(3), upper: new Float64Array(3).fill(0.6), budget: 1, groups: [] };

describe('meanVariance', () => {
  it('higher risk aversion moves weight towards the low-variance asset', () => {
    const bold = meanVariance(model, mean, longOnly, 1);
    const cautious = meanVariance(model, mean, longOnly, 20);
    expect(cautious.weights[0]).toBeGreaterThan(bold.weights[0]);
    expect(bold.diagnostics.converged).toBe(true);
    expect(bold.diagnostics.kktResidual).toBeLessThan(1e-9);
    expect(bold.warnings).toEqual([]);
  });

  it('a warm start from a nearby problem gives the same answer within two passes', () => {
    const base = meanVariance(model, mean, longOnly, 5);
    const nudged = mean.map((v) => v * 1.01);
    const warm = meanVariance(model, nudged, longOnly, 5, { warmStart: base.warmStart });
    const cold = meanVariance(model, nudged, longOnly, 5);
    for (let i = 0; i < 3; i++) expect(warm.weights[i]).toBeCloseTo(cold.weights[i], 12);
    expect(warm.diagnostics.iterations).toBeLessThanOrEqual(2);
    // Something that is not a QP warm start is ignored.
    const ignored = meanVariance(model, nudged, longOnly, 5, { warmStart: { nonsense: true } });
    for (let i = 0; i < 3; i++) expect(ignored.weights[i]).toBeCloseTo(cold.weights[i], 12);
  });

  it('rejects invalid risk aversion and mismatched inputs', () => {
    expect(() => meanVariance(model, mean, longOnly, 0)).toThrow(OptimizationError);
    expect(() => meanVariance(model, mean, longOnly, Number.NaN)).toThrow(/risk aversion/);
    expect(() => meanVariance(model, mean, longOnly, { factor: 2, specific: 5 })).toThrow(/factor risk model/);
    expect(() => meanVariance(model, Float64Array.from([0.1, 0.2]), longOnly, 2)).toThrow(/disagree/);
  });

  it('uses the factor form without expanding Σ and splits the risk aversion', () => {
    const factor: FactorRiskModel = {
      kind: 'factor',
      n: 3,
      k: 1,
      factorNames: ['market'],
      loadings: Float64Array.from([0.8, 1, 1.3]),
      factorCov: Float64Array.from([0.03]),
      specificVar: Float64Array.from([0.01, 0.04, 0.09]),
    };
    const uncapped: ConstraintSet = { ...longOnly, upper: new Float64Array(3).fill(Infinity) };
    const problem = meanVarianceProblem(factor, mean, uncapped, { factor: 2, specific: 8 });
    expect(problem.hessian.kind).toBe('factor');
    const highSpecific = meanVariance(factor, mean, uncapped, { factor: 2, specific: 8 });
    const lowSpecific = meanVariance(factor, mean, uncapped, { factor: 2, specific: 1 });
    // Penalising specific risk more cuts the asset with the most specific risk (asset 2).
    expect(highSpecific.weights[2]).toBeLessThan(lowSpecific.weights[2]);
    // Same optimum as a dense Σ' = λ_f·BFBᵀ + λ_s·D with λ = 1.
    const expanded: DenseRiskModel = { kind: 'dense', n: 3, cov: new Float64Array(9) };
    for (let i = 0; i < 3; i++) {
      for (let j = 0; j < 3; j++) {
        expanded.cov[i * 3 + j] = 2 * factor.loadings[i] * factor.factorCov[0] * factor.loadings[j] + (i === j ? 8 * factor.specificVar[i] : 0);
      }
    }
    const viaDense = meanVariance(expanded, mean, uncapped, 1);
    for (let i = 0; i < 3; i++) expect(highSpecific.weights[i]).toBeCloseTo(viaDense.weights[i], 12);
    expect(highSpecific.diagnostics.solver).toContain('Woodbury');
  });
});
