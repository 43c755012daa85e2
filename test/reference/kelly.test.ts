import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { expectedUtility, kelly, kellyMomentsFallback } from '../../src/optimize/kelly.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { ex3Covariance } from '../helpers/reference-data.js';

// Outside checks for the scenario Kelly solver. Values: Kelly (1956), Bell System Technical
// Journal 35(4); Thorp (2006), "The Kelly criterion in blackjack, sports betting and the stock
// market", ch. 9; as listed in the project's shared REFERENCES.md ("Kelly and log utility").

/** Cash (return 0 in every scenario) and one bet paying +b on a win and −1 on a loss. */
function binaryBetScenarios(b: number): Float64Array {
  return Float64Array.from([0, b, 0, -1]);
}

function longOnlyBudget(n: number): ConstraintSet {
  return { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
}

/** Growth g(f) = p·log(1 + b f) + (1 − p)·log(1 − f) of the binary bet (Kelly 1956). */
function growth(p: number, b: number, f: number): number {
  return p * Math.log(1 + b * f) + (1 - p) * Math.log(1 - f);
}

describe('binary bet as a two-scenario market (Kelly 1956; Thorp 2006)', () => {
  it('p = 0.6, b = 1: f* = p − (1−p)/b = 0.2, growth 0.020135513551 per bet', () => {
    const result = kelly(binaryBetScenarios(1), 2, longOnlyBudget(2), { scenarioWeights: Float64Array.from([0.6, 0.4]) });
    expect(Math.abs(result.weights[1] - 0.2)).toBeLessThan(1e-9);
    expect(Math.abs(result.weights[0] - 0.8)).toBeLessThan(1e-9);
    expect(Math.abs(result.growthRate - 0.020135513551)).toBeLessThan(1e-11);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
  });

  it('probabilities by replicated rows (3 wins, 2 losses) give the same bet as weights 0.6/0.4', () => {
    const rows = Float64Array.from([0, 1, 0, 1, 0, 1, 0, -1, 0, -1]);
    const result = kelly(rows, 5, longOnlyBudget(2));
    expect(Math.abs(result.weights[1] - 0.2)).toBeLessThan(1e-9);
    expect(Math.abs(result.growthRate - 0.020135513551)).toBeLessThan(1e-11);
  });

  it('p = 0.5, b = 2: f* = 0.25, growth 0.058891517828; growth at 2f* is exactly 0', () => {
    const p = Float64Array.from([0.5, 0.5]);
    const result = kelly(binaryBetScenarios(2), 2, longOnlyBudget(2), { scenarioWeights: p });
    expect(Math.abs(result.weights[1] - 0.25)).toBeLessThan(1e-9);
    expect(Math.abs(result.growthRate - 0.058891517828)).toBeLessThan(1e-11);
    // Betting twice the Kelly fraction: 0.5·log(2) + 0.5·log(0.5) = 0 (Thorp 2006).
    const twice = Float64Array.from([0.5, 0.5]);
    expect(Math.abs(expectedUtility(binaryBetScenarios(2), 2, twice, 1, p))).toBeLessThan(1e-15);
    expect(growth(0.5, 2, 0.5)).toBeCloseTo(0, 15);
  });

  it('fractional Kelly f = 0.5 (CRRA γ = 2) bets less, at the power-utility optimum', () => {
    // Power utility u(W) = (W^{1−γ} − 1)/(1 − γ) (MacLean, Thorp & Ziemba 2011 read fractional
    // Kelly f as γ = 1/f). Its first-order condition for the binary bet,
    // p·b·(1 + b x)^{−γ} = (1 − p)·(1 − x)^{−γ}, gives x = (k − 1)/(b + k), k = (p b/(1 − p))^{1/γ}
    // (derived here; with γ = 1 it reduces to Kelly's p − (1 − p)/b).
    for (const [p, b] of [
      [0.6, 1],
      [0.5, 2],
    ]) {
      const weights = Float64Array.from([p, 1 - p]);
      const full = kelly(binaryBetScenarios(b), 2, longOnlyBudget(2), { scenarioWeights: weights });
      const half = kelly(binaryBetScenarios(b), 2, longOnlyBudget(2), { scenarioWeights: weights, fraction: 0.5 });
      const k = Math.sqrt((p * b) / (1 - p));
      const exact = (k - 1) / (b + k);
      expect(Math.abs(half.weights[1] - exact)).toBeLessThan(1e-9);
      expect(half.weights[1]).toBeLessThan(full.weights[1]);
      // Close to, but not exactly, half the full bet: the "f·f*" rule is exact only in the
      // continuous lognormal limit (MacLean, Thorp & Ziemba 2011).
      expect(Math.abs(half.weights[1] - 0.5 * full.weights[1]) / (0.5 * full.weights[1])).toBeLessThan(0.06);
      expect(half.diagnostics.kktResidual).toBeLessThan(1e-9);
    }
  });
});

describe('continuous approximation F* = Σ⁻¹(μ − r) (Thorp 2006; example computed in REFERENCES.md)', () => {
  it('moments fallback (mean-variance with λ = γ = 1) with a cash asset paying r reproduces F*', () => {
    // Assets: cash with return r = 0.03 and zero variance, then the three risky assets; no
    // position limits. With Σw = 1 the cash holding absorbs the budget, so the risky weights
    // solve max (μ − r)ᵀw − ½wᵀΣw, i.e. F* = Σ⁻¹(μ − r). Cash makes the covariance singular,
    // which the solver handles exactly (augmented reduced systems, see qp-hessian.ts).
    // Risky block: EX3 (REFERENCES.md), σ = (0.15, 0.20, 0.25), correlation [[1,.3,.2],[.3,1,.4],[.2,.4,1]].
    const risky = ex3Covariance();
    const n = 4;
    const cov = new Float64Array(n * n);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) cov[(i + 1) * n + (j + 1)] = risky[i * 3 + j];
    const model: DenseRiskModel = { kind: 'dense', n, cov };
    const mean = Float64Array.from([0.03, 0.08, 0.1, 0.12]);
    const free: ConstraintSet = { n, lower: new Float64Array(n).fill(-Infinity), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
    const result = kellyMomentsFallback(model, mean, free, { fraction: 1 });
    const expected = [1.532102022867, 0.925241864556, 0.960070360598];
    for (let i = 0; i < 3; i++) expect(Math.abs(result.weights[i + 1] - expected[i])).toBeLessThan(1e-9);
    expect(Math.abs(result.weights[0] - (1 - expected.reduce((a, b) => a + b, 0)))).toBeLessThan(1e-9);
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
    // Half Kelly halves the risky positions exactly in this approximation (λ = 2).
    const half = kellyMomentsFallback(model, mean, free, { fraction: 0.5 });
    for (let i = 0; i < 3; i++) expect(Math.abs(half.weights[i + 1] - expected[i] / 2)).toBeLessThan(1e-9);
  });
});
