import { describe, expect, it } from 'vitest';
import { estimateMultipliers, hessianTimes, kktReport, qpObjective } from '../../src/optimize/kkt.js';
import type { QpProblem } from '../../src/optimize/qp-types.js';

// A problem solved by hand from the KKT conditions (Nocedal & Wright, Theorem 12.1):
// minimise ½(x₁² + x₂² + x₃²) s.t. x₁ + x₂ + x₃ = 1, x₁ ≥ 0.6, x₂ + x₃ ≤ 0.4 (group), x ≥ 0.
// Stationarity x = ν·1 + z + ν_g·1_g: with x₁ at its bound, x₂ = x₃ = 0.2, ν = 0.2 (free x₂, x₃
// need x = ν + ν_g and the group is slack only if ν_g = 0), z₁ = 0.6 − 0.2 = 0.4 ≥ 0.
const problem: QpProblem = {
  hessian: { kind: 'dense', n: 3, matrix: Float64Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]) },
  linear: new Float64Array(3),
  constraints: {
    n: 3,
    lower: Float64Array.from([0.6, 0, 0]),
    upper: new Float64Array(3).fill(Infinity),
    budget: 1,
    groups: [{ name: 'rest', members: Int32Array.from([1, 2]), min: -Infinity, max: 0.4 }],
  },
};
const x = Float64Array.from([0.6, 0.2, 0.2]);

describe('KKT residuals', () => {
  it('are zero at the hand-solved optimum with the hand-derived multipliers', () => {
    // The group is tight (0.4) with ν_g = 0, the multipliers are not unique; one valid choice:
    const report = kktReport(problem, x, { budget: 0.2, groups: Float64Array.from([0]), bounds: Float64Array.from([0.4, 0, 0]) });
    expect(report.max).toBeLessThan(1e-15);
    // Another valid choice moves weight into the (tight) group multiplier: ν = 0.6, ν_g = −0.4, z₁ = 0.
    const other = kktReport(problem, x, { budget: 0.6, groups: Float64Array.from([-0.4]), bounds: Float64Array.from([0, 0, 0]) });
    expect(other.max).toBeLessThan(1e-15);
  });

  it('flag each kind of violation', () => {
    const good = { budget: 0.2, groups: Float64Array.from([0]), bounds: Float64Array.from([0.4, 0, 0]) };
    // Stationarity: wrong budget multiplier; G = max(‖c‖∞ = 0, ‖Hx‖∞ = 0.6, max H_ii·W = 1·1) = 1.
    expect(kktReport(problem, x, { ...good, budget: 0.25 }).stationarity).toBeCloseTo(0.05, 12);
    // Primal: budget broken.
    expect(kktReport(problem, Float64Array.from([0.6, 0.2, 0.3]), good).primalFeasibility).toBeGreaterThan(0.09);
    // Dual sign: a negative multiplier on a lower bound shows as a complementarity or sign breach.
    const wrongSign = kktReport(problem, x, { budget: 0.6, groups: Float64Array.from([0.4]), bounds: Float64Array.from([0, -0.8, -0.8]) });
    expect(wrongSign.max).toBeGreaterThan(0.1);
    // Complementarity: a multiplier on an inactive bound (x₂ = 0.2 > 0).
    const comp = kktReport(problem, x, { budget: 0.2, groups: Float64Array.from([0]), bounds: Float64Array.from([0.4, 0.1, 0]) });
    expect(comp.complementarity).toBeGreaterThan(0.01);
  });

  it('judge a riskless optimum (Hx = 0, c = 0) on the scale of H, not of the rounding noise in Hx', () => {
    // minimise ½xᵀHx, H = diag(0.04, 0.09, 0): all in the riskless third asset, Hx = 0, every
    // multiplier 0 (Nocedal & Wright, Theorem 12.1 by hand). A point off by one rounding unit of
    // the weights (2.2e-17 in the risky assets) is as correct as floating point allows: its
    // gradient residual (≈ 1e-18) is tiny against what H can produce (0.09 per unit weight) —
    // although it is all of ‖Hx‖∞.
    const riskless: QpProblem = {
      hessian: { kind: 'dense', n: 3, matrix: Float64Array.from([0.04, 0, 0, 0, 0.09, 0, 0, 0, 0]) },
      linear: new Float64Array(3),
      constraints: { n: 3, lower: new Float64Array(3), upper: new Float64Array(3).fill(Infinity), budget: 1, groups: [] },
    };
    const zero = { budget: 0, groups: new Float64Array(0), bounds: new Float64Array(3) };
    expect(kktReport(riskless, Float64Array.from([0, 0, 1]), zero).max).toBe(0);
    const rounded = Float64Array.from([2 ** -52 / 10, 2 ** -52 / 10, 1 - 2 ** -52 / 5]);
    const report = kktReport(riskless, rounded, zero);
    expect(report.gradientScale).toBe(0.09);
    expect(report.max).toBeLessThan(1e-16);
    // A genuinely wrong point still fails: 1 % in the risky second asset leaves a gradient of
    // 0.0009 that no multiplier of an inactive bound may absorb.
    expect(kktReport(riskless, Float64Array.from([0, 0.01, 0.99]), zero).stationarity).toBeCloseTo(0.01, 12);
  });

  it('estimateMultipliers recovers a valid set from x alone', () => {
    const m = estimateMultipliers(problem, x);
    expect(kktReport(problem, x, m).max).toBeLessThan(1e-12);
  });

  it('objective and Hessian product for a factor Hessian match the expanded form', () => {
    const factorProblem: QpProblem = {
      hessian: {
        kind: 'factor',
        model: {
          kind: 'factor',
          n: 2,
          k: 1,
          factorNames: ['m'],
          loadings: Float64Array.from([1, 2]),
          factorCov: Float64Array.from([0.5]),
          specificVar: Float64Array.from([0.1, 0.2]),
        },
        factorScale: 2,
        specificScale: 3,
      },
      linear: Float64Array.from([1, -1]),
      constraints: problem.constraints,
    };
    // H = 2·0.5·bbᵀ + 3·diag(0.1, 0.2) = [[1.3, 2], [2, 4.6]].
    const hx = hessianTimes(factorProblem.hessian, Float64Array.from([1, 1]), new Float64Array(2));
    expect(hx[0]).toBeCloseTo(3.3, 14);
    expect(hx[1]).toBeCloseTo(6.6, 14);
    expect(qpObjective(factorProblem, Float64Array.from([1, 1]))).toBeCloseTo(0.5 * (3.3 + 6.6), 14);
  });
});
