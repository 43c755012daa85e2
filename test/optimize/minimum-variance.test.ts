import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { meanVariance } from '../../src/optimize/mean-variance.js';
import { estimateMultipliers, hessianTimes, kktReport } from '../../src/optimize/kkt.js';
import { minimumVariance, minimumVarianceProblem } from '../../src/optimize/minimum-variance.js';
import { nearestPsd } from '../../src/estimate/psd.js';
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

describe('minimum variance on a covariance repaired to PSD (nearestPsd, eigenvalues clipped at 0)', () => {
  // The same kind of matrix as the singular dense bench shape (test/bench/limit-shapes.ts): rank 5
  // (five factors, no specific risk) with a tiny negative wobble on the diagonal, then Higham's
  // nearest PSD matrix. Its null space is N − 5 dimensional, so many long-only portfolios have zero
  // risk and the optimum is a flat face. Before the solver's stationarity test used the KKT scale,
  // this solve (like the N = 550 bench shape, which ran 5 500 iterations) stopped unconverged at
  // its cap, and optimize answered 422 "not-converged".
  function parkMiller(seed: number): () => number {
    let s = seed;
    return () => {
      s = (16807 * s) % 2147483647;
      return s / 2147483647;
    };
  }

  function repairedFactorCovariance(n: number, seed: number): Float64Array {
    const u = parkMiller(seed);
    const k = 5;
    const b = Array.from({ length: n * k }, () => 0.1 * (u() - 0.3));
    const cov = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j <= i; j++) {
        let s = 0;
        for (let a = 0; a < k; a++) s += b[i * k + a] * b[j * k + a];
        if (i === j) s -= 1e-6 * u();
        cov[i * n + j] = cov[j * n + i] = Number(s.toPrecision(8));
      }
    }
    const repair = nearestPsd(cov, n);
    expect(repair.clipped).toBeGreaterThan(0);
    return repair.matrix;
  }

  it('N = 40: converges in about one iteration per bound, to zero risk, with the four KKT conditions met', () => {
    const n = 40;
    const model: DenseRiskModel = { kind: 'dense', n, cov: repairedFactorCovariance(n, 15838) };
    const longOnly: ConstraintSet = { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
    const result = minimumVariance(model, longOnly);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.diagnostics.iterations).toBeLessThanOrEqual(2 * n);
    // A PSD covariance gives wᵀΣw ≥ 0 for every w: a variance at rounding level is the global minimum.
    let v = 0;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v += result.weights[i] * model.cov[i * n + j] * result.weights[j];
    expect(Math.abs(v)).toBeLessThan(1e-16);
    const problem = minimumVarianceProblem(model, longOnly);
    const report = kktReport(problem, result.weights, estimateMultipliers(problem, result.weights));
    expect(report.stationarity).toBeLessThan(1e-12);
    expect(report.primalFeasibility).toBeLessThan(1e-14);
    expect(report.dualFeasibility).toBeLessThan(1e-12);
    expect(report.complementarity).toBeLessThan(1e-12);
  });
});
