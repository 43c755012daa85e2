import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { meanVariance } from '../../src/optimize/mean-variance.js';
import { estimateMultipliers, hessianTimes, kktReport } from '../../src/optimize/kkt.js';
import { minimumVariance, minimumVarianceProblem } from '../../src/optimize/minimum-variance.js';
import { ACCEPTED_KKT_RESIDUAL } from '../../src/optimize/types.js';
import type { ConstraintSet } from '../../src/optimize/types.js';

const model: DenseRiskModel = {
  kind: 'dense',
  n: 3,
  cov: Float64Array.from([0.04, 0.006, 0.002, 0.006, 0.09, 0.01, 0.002, 0.01, 0.16]),
};
const cs: ConstraintSet = { n: 3, lower: new Float64Array(3), upper: new Float64Array(3).fill(Infinity), budget: 1, groups: [] };

function variance(w: Float64Array): number {
  let v = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) v += w[i] * model.cov[i * 3 + j] * w[j];
  return v;
}

describe('minimumVariance', () => {
  it('equals mean-variance with μ = 0 and has the lowest variance of nearby feasible points', () => {
    const mv = minimumVariance(model, cs);
    const zeroMean = meanVariance(model, new Float64Array(3), cs, 1);
    for (let i = 0; i < 3; i++) expect(mv.weights[i]).toBeCloseTo(zeroMean.weights[i], 13);
    const v0 = variance(mv.weights);
    // Any budget-preserving move that stays long-only raises the variance.
    for (const [a, b] of [
      [0, 1],
      [1, 2],
      [0, 2],
    ]) {
      for (const step of [1e-3, -1e-3]) {
        const w = Float64Array.from(mv.weights);
        w[a] += step;
        w[b] -= step;
        if (w[a] < 0 || w[b] < 0) continue;
        expect(variance(w)).toBeGreaterThan(v0);
      }
    }
  });

  it('ignores the scale of the covariance', () => {
    const scaled: DenseRiskModel = { ...model, cov: model.cov.map((v) => 250 * v) };
    const a = minimumVariance(model, cs).weights;
    const b = minimumVariance(scaled, cs).weights;
    for (let i = 0; i < 3; i++) expect(a[i]).toBeCloseTo(b[i], 13);
  });

  describe('at a riskless corner (an asset with zero or ~1e-36 variance)', () => {
    // Σ of three risky assets plus a constant-return column: exactly zero, or the 1e-36 noise a
    // sample covariance of a constant series leaves (variance 1.7e-36, covariances ±6e-36 as in
    // the D5 reproducer). The optimum is all in the riskless asset: wᵀΣw = 0 is the least possible.
    const risky = [0.0438, -0.0194, 0.0261, -0.0194, 0.0186, -0.0135, 0.0261, -0.0135, 0.0194];
    function withCash(variance: number, covariances: readonly number[]): DenseRiskModel {
      const cov = new Float64Array(16);
      for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) cov[i * 4 + j] = risky[i * 3 + j];
      for (let i = 0; i < 3; i++) cov[i * 4 + 3] = cov[3 * 4 + i] = covariances[i];
      cov[15] = variance;
      return { kind: 'dense', n: 4, cov };
    }
    const longOnly: ConstraintSet = { n: 4, lower: new Float64Array(4), upper: new Float64Array(4).fill(Infinity), budget: 1, groups: [] };
    for (const [label, cash] of [
      ['exactly zero variance', withCash(0, [0, 0, 0])],
      ['variance 1.7e-36 (rounding noise)', withCash(1.72e-36, [6.32e-36, -3.06e-36, 9.18e-37])],
    ] as const) {
      it(`${label}: solves to the corner and its KKT conditions hold (Nocedal & Wright, Theorem 12.1)`, () => {
        const result = minimumVariance(cash, longOnly);
        expect(result.diagnostics.converged).toBe(true);
        expect(result.diagnostics.kktResidual).toBeLessThanOrEqual(ACCEPTED_KKT_RESIDUAL);
        for (let i = 0; i < 3; i++) expect(Math.abs(result.weights[i])).toBeLessThan(1e-14);
        expect(result.weights[3]).toBeCloseTo(1, 14);
        // Audit the four conditions independently of the solver's own multipliers.
        const problem = minimumVarianceProblem(cash, longOnly);
        const multipliers = estimateMultipliers(problem, result.weights);
        const report = kktReport(problem, result.weights, multipliers);
        expect(report.stationarity).toBeLessThan(1e-12);
        expect(report.primalFeasibility).toBeLessThan(1e-15);
        expect(report.dualFeasibility).toBe(0);
        expect(report.complementarity).toBeLessThan(1e-12);
        // The scale is the largest variance (0.0438 per unit weight), not ‖Σw‖∞ ≈ 0.
        expect(report.gradientScale).toBeCloseTo(0.0438, 15);
        const gradient = hessianTimes(problem.hessian, result.weights, new Float64Array(4));
        expect(Math.max(...gradient.map(Math.abs))).toBeLessThan(1e-17);
        // xᵀ(Σx − ν1 − z) = 0 with zᵀx = 0 (complementarity at lower bounds 0) and 1ᵀx = 1 gives
        // ν = wᵀΣw: 0 here, no risk left to price.
        expect(Math.abs(multipliers.budget)).toBeLessThan(1e-17);
      });
    }
  });
});
