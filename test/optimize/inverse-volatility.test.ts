import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';
import { fillInverseVolatilityWeights, inverseVolatility } from '../../src/optimize/inverse-volatility.js';
import { solveRiskParity } from '../../src/optimize/risk-parity.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { OptimizationError } from '../../src/optimize/types.js';

function diagonal(vols: readonly number[], rho = 0): DenseRiskModel {
  const n = vols.length;
  const cov = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) cov[i * n + j] = vols[i] * vols[j] * (i === j ? 1 : rho);
  return { kind: 'dense', n, cov };
}

describe('inverse volatility', () => {
  it('w ∝ 1/σ_i: σ = (10, 20, 30, 40)% → (0.48, 0.24, 0.16, 0.12)', () => {
    // (1/0.1, 1/0.2, 1/0.3, 1/0.4) / 25 — the same numbers as the ERC example of Maillard,
    // Roncalli & Teïletche (2010), where constant correlation makes ERC = inverse volatility.
    const r = inverseVolatility(diagonal([0.1, 0.2, 0.3, 0.4], 0.5));
    const expected = [0.48, 0.24, 0.16, 0.12];
    for (let i = 0; i < 4; i++) expect(Math.abs(r.weights[i] - expected[i])).toBeLessThan(1e-15);
    expect(r.diagnostics.solver).toBe('closed-form');
    expect(r.diagnostics.kktResidual).toBeLessThan(1e-15);
    expect(r.warnings).toEqual([]);
  });

  it('equals the ERC portfolio under constant correlation (Maillard, Roncalli & Teïletche 2010)', () => {
    const model = diagonal([0.07, 0.15, 0.22, 0.09, 0.31], 0.35);
    const iv = inverseVolatility(model).weights;
    const erc = solveRiskParity(model).weights;
    for (let i = 0; i < 5; i++) expect(Math.abs(iv[i] - erc[i])).toBeLessThan(1e-12);
  });

  it('reads variances from a factor model without expanding it (σ_i² = B_iFB_iᵀ + D_i)', () => {
    const model: FactorRiskModel = {
      kind: 'factor',
      n: 3,
      k: 1,
      factorNames: ['market'],
      loadings: Float64Array.of(1, 0.5, 2),
      factorCov: Float64Array.of(0.04),
      specificVar: Float64Array.of(0.01, 0.03, 0.02),
    };
    const vols = [Math.sqrt(0.04 + 0.01), Math.sqrt(0.25 * 0.04 + 0.03), Math.sqrt(4 * 0.04 + 0.02)];
    const inv = vols.map((s) => 1 / s);
    const total = inv.reduce((a, b) => a + b, 0);
    const r = inverseVolatility(model);
    for (let i = 0; i < 3; i++) expect(Math.abs(r.weights[i] - inv[i] / total)).toBeLessThan(1e-15);
  });

  it('scales to the budget and can write in place', () => {
    const out = new Float64Array(2);
    const r = inverseVolatility(diagonal([0.1, 0.3]), { budget: 2, out });
    expect(r.weights).toBe(out);
    expect(Math.abs(out[0] - 1.5)).toBeLessThan(1e-15);
    expect(Math.abs(out[1] - 0.5)).toBeLessThan(1e-15);
    const w = fillInverseVolatilityWeights(Float64Array.of(0.01, 0.04), new Float64Array(2));
    expect(Array.from(w).map((x) => Math.round(x * 1e12) / 1e12)).toEqual([0.666666666667, 0.333333333333]);
  });

  it('rejects zero or non-finite variances', () => {
    expect(() => inverseVolatility(diagonal([0.1, 0]))).toThrow(OptimizationError);
    expect(() => fillInverseVolatilityWeights(Float64Array.of(0.01, Number.NaN), new Float64Array(2))).toThrow(/asset 1/);
  });

  it('reports ignored upper bounds rather than clipping', () => {
    const constraints: ConstraintSet = { n: 2, lower: new Float64Array(2), upper: Float64Array.of(0.6, 0.6), budget: 1, groups: [] };
    const r = inverseVolatility(diagonal([0.1, 0.3]), { constraints, assetNames: ['bond', 'equity'] });
    expect(r.weights[0]).toBeCloseTo(0.75, 15);
    expect(r.warnings[0].code).toBe('constraints-not-applied');
    expect(r.warnings[0].message).toContain("upper bound on asset 'bond' (index 0): 0.75 > 0.6 by 0.15");
  });
});
