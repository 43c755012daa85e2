import { Matrix, inverse } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { meanVariance } from '../../src/optimize/mean-variance.js';
import { minimumVariance } from '../../src/optimize/minimum-variance.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { constantCorrelation, denseFromVolsAndCorrelation, ex3Means, ex3Model, ex4fMeans, ex4fModel, MRT_BLOCK_CORRELATION, MRT_VOLS } from '../helpers/reference-data.js';

// Outside checks for the QP-based Markowitz methods. Published / computed values are listed in
// the project's shared REFERENCES.md; each check names its source beside it.

function budgetOnly(n: number): ConstraintSet {
  return { n, lower: new Float64Array(n).fill(-Infinity), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
}

function longOnly(n: number): ConstraintSet {
  return { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

function variance(model: DenseRiskModel, w: ArrayLike<number>): number {
  let v = 0;
  for (let i = 0; i < model.n; i++) for (let j = 0; j < model.n; j++) v += w[i] * model.cov[i * model.n + j] * w[j];
  return v;
}

// EX3 (REFERENCES.md "Markowitz closed forms"; Merton 1972, JFQA 7(4)).
const ex3 = ex3Model();
const ex3Mean = ex3Means();
const EX3_C = 57.20316622691294; // 1ᵀΣ⁻¹1 (REFERENCES.md, computed)
const EX3_A = 5.133509234828497; // 1ᵀΣ⁻¹μ

describe('Markowitz closed forms on EX3 (Merton 1972; values computed in REFERENCES.md)', () => {
  it('global minimum variance: w = Σ⁻¹1/C and variance 1/C', () => {
    const result = minimumVariance(ex3, budgetOnly(3));
    expect(maxAbsDiff(result.weights, [0.642681426814, 0.227552275523, 0.129766297663])).toBeLessThan(1e-9);
    expect(Math.abs(variance(ex3, result.weights) - 1 / EX3_C)).toBeLessThan(1e-12);
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
    expect(result.diagnostics.converged).toBe(true);
  });

  it('budget-only mean-variance, γ = 2 and γ = 5: w = Σ⁻¹(μ − η1)/γ, η = (A − γ)/C', () => {
    const cases: [number, number[]][] = [
      [2, [0.310578105781, 0.301353013530, 0.388068880689]],
      [5, [0.509840098401, 0.257072570726, 0.233087330873]],
    ];
    const sigmaInv = inverse(new Matrix(Array.from({ length: 3 }, (_, i) => Array.from(ex3.cov.subarray(3 * i, 3 * i + 3)))));
    for (const [gamma, expected] of cases) {
      const result = meanVariance(ex3, ex3Mean, budgetOnly(3), gamma);
      expect(maxAbsDiff(result.weights, expected)).toBeLessThan(1e-9);
      // Re-derive the closed form with ml-matrix's inverse (independent of the solver).
      const eta = (EX3_A - gamma) / EX3_C;
      const closed = sigmaInv.mmul(Matrix.columnVector(Array.from(ex3Mean, (m) => (m - eta) / gamma))).to1DArray();
      expect(maxAbsDiff(result.weights, closed)).toBeLessThan(1e-12);
      expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
    }
  });

  it('sensitivity ∂w/∂μ diagonal at γ = 5 by central finite differences of the solver', () => {
    // REFERENCES.md: ∂w/∂μ = (1/γ)Z(ZᵀΣZ)⁻¹Zᵀ, diagonal (5.125051250513, 5.740057400574, 3.649036490365).
    const gamma = 5;
    const h = 1e-4;
    const diagonal: number[] = [];
    for (let i = 0; i < 3; i++) {
      const up = Float64Array.from(ex3Mean);
      const down = Float64Array.from(ex3Mean);
      up[i] += h;
      down[i] -= h;
      const wUp = meanVariance(ex3, up, budgetOnly(3), gamma).weights;
      const wDown = meanVariance(ex3, down, budgetOnly(3), gamma).weights;
      diagonal.push((wUp[i] - wDown[i]) / (2 * h));
    }
    // The map μ ↦ w is linear here, so central differences are exact up to rounding (~1e-12/h).
    expect(maxAbsDiff(diagonal, [5.125051250513, 5.740057400574, 3.649036490365])).toBeLessThan(1e-9);
    // And the closed form with Z a null-space basis of 1ᵀ, computed with ml-matrix.
    const z = new Matrix([
      [1, 0],
      [-1, 1],
      [0, -1],
    ]);
    const sigma = new Matrix(Array.from({ length: 3 }, (_, i) => Array.from(ex3.cov.subarray(3 * i, 3 * i + 3))));
    const sens = z.mmul(inverse(z.transpose().mmul(sigma).mmul(z))).mmul(z.transpose()).div(gamma);
    expect(maxAbsDiff(diagonal, [sens.get(0, 0), sens.get(1, 1), sens.get(2, 2)])).toBeLessThan(1e-9);
  });
});

// EX4F (REFERENCES.md "Factor form").
const ex4f = ex4fModel();
const ex4fMean = ex4fMeans();

describe('factor-form mean-variance on EX4F (REFERENCES.md, computed)', () => {
  it('λ_f = 4, λ_s = 10 → w = M⁻¹(μ − η1), M = λ_f BFBᵀ + λ_s D', () => {
    const result = meanVariance(ex4f, ex4fMean, budgetOnly(4), { factor: 4, specific: 10 });
    expect(maxAbsDiff(result.weights, [0.383650128362, 0.248291923166, 0.196069786818, 0.171988161654])).toBeLessThan(1e-9);
    expect(result.diagnostics.solver).toContain('factor');
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
  });

  it('λ_f = λ_s = 5 equals plain γ = 5 on the expanded Σ = BFBᵀ + D', () => {
    const factorForm = meanVariance(ex4f, ex4fMean, budgetOnly(4), { factor: 5, specific: 5 });
    const dense: DenseRiskModel = { kind: 'dense', n: 4, cov: toDenseCovariance(ex4f) };
    const plain = meanVariance(dense, ex4fMean, budgetOnly(4), 5);
    expect(maxAbsDiff(factorForm.weights, plain.weights)).toBeLessThan(1e-12);
    // Closed form with ml-matrix: w = Σ⁻¹(μ − η1)/γ, η = (1ᵀΣ⁻¹μ − γ)/(1ᵀΣ⁻¹1).
    const inv = inverse(new Matrix(Array.from({ length: 4 }, (_, i) => Array.from(dense.cov.subarray(4 * i, 4 * i + 4)))));
    const ones = Matrix.columnVector([1, 1, 1, 1]);
    const a = ones.transpose().mmul(inv).mmul(Matrix.columnVector(Array.from(ex4fMean))).get(0, 0);
    const c = ones.transpose().mmul(inv).mmul(ones).get(0, 0);
    const eta = (a - 5) / c;
    const closed = inv.mmul(Matrix.columnVector(Array.from(ex4fMean, (m) => (m - eta) / 5))).to1DArray();
    expect(maxAbsDiff(factorForm.weights, closed)).toBeLessThan(1e-12);
  });
});

// Maillard, Roncalli & Teïletche (2010), J. Portfolio Management 36(4): long-only minimum variance
// for σ = (10, 20, 30, 40) % (values as listed in REFERENCES.md, "Risk parity").
const VOLS = MRT_VOLS;

describe('long-only minimum variance (Maillard, Roncalli & Teïletche 2010)', () => {
  it('block correlation [[1,.8,0,0],[.8,1,0,0],[0,0,1,−.5],[0,0,−.5,1]] → (108, 0, 22, 15)/145, vol 0.0863033943', () => {
    const model = denseFromVolsAndCorrelation(VOLS, MRT_BLOCK_CORRELATION);
    const result = minimumVariance(model, longOnly(4));
    expect(maxAbsDiff(result.weights, [108 / 145, 0, 22 / 145, 15 / 145])).toBeLessThan(1e-9);
    expect(Math.abs(Math.sqrt(variance(model, result.weights)) - 0.0863033943)).toBeLessThan(1e-10);
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
  });

  it('constant ρ = 0.5 → (1, 0, 0, 0)', () => {
    const result = minimumVariance(denseFromVolsAndCorrelation(VOLS, constantCorrelation(4, 0.5)), longOnly(4));
    expect(maxAbsDiff(result.weights, [1, 0, 0, 0])).toBeLessThan(1e-9);
  });

  it('constant ρ = 0 → ∝ 1/σ² = (0.7024390244, 0.1756097561, 0.0780487805, 0.0439024390)', () => {
    const result = minimumVariance(denseFromVolsAndCorrelation(VOLS, constantCorrelation(4, 0)), longOnly(4));
    const inv = VOLS.map((s) => 1 / (s * s));
    const total = inv.reduce((a, b) => a + b, 0);
    expect(maxAbsDiff(result.weights, inv.map((v) => v / total))).toBeLessThan(1e-9);
    expect(maxAbsDiff(result.weights, [0.7024390244, 0.1756097561, 0.078048780500, 0.043902439])).toBeLessThan(1e-9);
  });
});
