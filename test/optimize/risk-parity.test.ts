import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';
import { covTimes, toDenseCovariance } from '../../src/linalg/risk-ops.js';
import {
  createRiskParityWorkspace,
  DENSE_NEWTON_MAX_N,
  isRiskParityWarmStart,
  normaliseRiskBudgets,
  riskBudgetResidual,
  solveRiskParity,
} from '../../src/optimize/risk-parity.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { OptimizationError } from '../../src/optimize/types.js';
import { denseFromVolsAndCorrelation, MRT_BLOCK_CORRELATION, MRT_VOLS, parkMiller } from '../helpers/reference-data.js';

// Block example of Maillard, Roncalli & Teïletche (2010); ERC weights in REFERENCES.md.
const BLOCK = denseFromVolsAndCorrelation(MRT_VOLS, MRT_BLOCK_CORRELATION);
const BLOCK_ERC = [0.3836125063, 0.1918062531, 0.2426178518, 0.1819633888];

function randomFactorModel(n: number, k: number, seed: number): FactorRiskModel {
  const u = parkMiller(seed); // Park–Miller generator (REFERENCES.md)
  const loadings = new Float64Array(n * k);
  for (let i = 0; i < n * k; i++) loadings[i] = 1.5 * u() - 0.4;
  const factorCov = new Float64Array(k * k);
  const a = new Float64Array(k * k);
  for (let i = 0; i < k * k; i++) a[i] = u() - 0.5;
  for (let p = 0; p < k; p++) {
    for (let q = 0; q < k; q++) {
      let s = 0;
      for (let c = 0; c < k; c++) s += a[p * k + c] * a[q * k + c];
      factorCov[p * k + q] = 0.002 * s + (p === q ? 0.001 : 0);
    }
  }
  const specificVar = new Float64Array(n);
  for (let i = 0; i < n; i++) specificVar[i] = 0.001 + 0.004 * u();
  return { kind: 'factor', n, k, factorNames: Array.from({ length: k }, (_, i) => `f${i}`), loadings, factorCov, specificVar };
}

/** Same factor model with specific variances perturbed by up to ±10 % (a "nearby" draw). */
function perturbed(model: FactorRiskModel, seed: number): FactorRiskModel {
  const u = parkMiller(seed); // Park–Miller generator (REFERENCES.md)
  return { ...model, specificVar: model.specificVar.map((d) => d * (1 + 0.2 * (u() - 0.5))) };
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

function constraintSet(n: number, upper: number, groups: ConstraintSet['groups'] = []): ConstraintSet {
  return { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(upper), budget: 1, groups };
}

describe('risk budgets validation', () => {
  it('normalises positive budgets to sum 1 and defaults to equal budgets', () => {
    const b = normaliseRiskBudgets([4, 3, 2, 1], 4);
    expect(Array.from(b)).toEqual([0.4, 0.3, 0.2, 0.1]);
    expect(Array.from(normaliseRiskBudgets(undefined, 4))).toEqual([0.25, 0.25, 0.25, 0.25]);
    // Unnormalised budgets give the same portfolio as normalised ones.
    const a = solveRiskParity(BLOCK, { budgets: [4, 3, 2, 1] });
    const c = solveRiskParity(BLOCK, { budgets: [0.4, 0.3, 0.2, 0.1] });
    expect(maxAbsDiff(a.weights, c.weights)).toBeLessThan(1e-15);
  });

  it.each([
    ['wrong length', [0.5, 0.5]],
    ['zero budget', [0.5, 0.5, 0, 0.1]],
    ['negative budget', [0.5, 0.5, -0.1, 0.1]],
    ['NaN budget', [0.5, 0.5, Number.NaN, 0.1]],
    ['infinite budget', [0.5, 0.5, Number.POSITIVE_INFINITY, 0.1]],
  ])('rejects %s with OptimizationError(invalid-input)', (_label, budgets) => {
    expect(() => solveRiskParity(BLOCK, { budgets })).toThrow(OptimizationError);
    try {
      solveRiskParity(BLOCK, { budgets });
    } catch (e) {
      expect((e as OptimizationError).code).toBe('invalid-input');
    }
  });

  it('rejects an asset with zero variance and a Σ with 1ᵀΣ1 = 0', () => {
    const zeroVar: DenseRiskModel = { kind: 'dense', n: 2, cov: Float64Array.of(0.04, 0, 0, 0) };
    expect(() => solveRiskParity(zeroVar)).toThrow(/positive finite asset variances/);
    // Perfect negative correlation, equal vols: 1ᵀΣ1 = 0 (no ERC portfolio exists).
    const hedged: DenseRiskModel = { kind: 'dense', n: 2, cov: Float64Array.of(0.01, -0.01, -0.01, 0.01) };
    expect(() => solveRiskParity(hedged)).toThrow(OptimizationError);
  });
});

describe('solver behaviour', () => {
  it('reports iterations, convergence and the verified KKT residual x∘(Σx) − b', () => {
    const r = solveRiskParity(BLOCK);
    expect(r.diagnostics.converged).toBe(true);
    expect(r.diagnostics.solver).toBe('newton');
    expect(r.diagnostics.iterations).toBeGreaterThan(0);
    // Spinu (2013) report a handful of Newton steps from x₀ = 1/√(1ᵀΣ1).
    expect(r.diagnostics.iterations).toBeLessThanOrEqual(10);
    // Residual recomputed here from the returned warm-start x.
    const residual = riskBudgetResidual(BLOCK, r.warmStart.x, normaliseRiskBudgets(undefined, 4));
    expect(residual).toBe(r.diagnostics.kktResidual);
    expect(residual).toBeLessThanOrEqual(1e-12);
    expect(isRiskParityWarmStart(r.warmStart)).toBe(true);
    expect(r.warnings).toEqual([]);
    // Weights are long-only and sum to 1.
    expect(Math.abs(r.weights.reduce((a, b) => a + b, 0) - 1)).toBeLessThan(1e-15);
    expect(Math.min(...r.weights)).toBeGreaterThan(0);
  });

  it('a single asset gets weight 1', () => {
    const r = solveRiskParity({ kind: 'dense', n: 1, cov: Float64Array.of(0.09) });
    expect(Array.from(r.weights)).toEqual([1]);
    expect(r.diagnostics.converged).toBe(true);
  });

  it('falls back to coordinate descent when Newton is stopped early, same answer', () => {
    const r = solveRiskParity(BLOCK, { maxNewtonIterations: 1 });
    expect(r.details.fellBack).toBe(true);
    expect(r.diagnostics.solver).toBe('newton→coordinate-descent');
    expect(r.details.newtonIterations).toBe(1);
    expect(r.details.coordinateSweeps).toBeGreaterThan(0);
    expect(r.diagnostics.converged).toBe(true);
    expect(maxAbsDiff(r.weights, BLOCK_ERC)).toBeLessThan(1e-9);
  });

  it('Newton polishes what coordinate descent leaves', () => {
    const r = solveRiskParity(BLOCK, { solver: 'coordinate-descent', maxSweeps: 2 });
    expect(r.diagnostics.solver).toBe('coordinate-descent→newton');
    expect(r.details.coordinateSweeps).toBe(2);
    expect(r.diagnostics.converged).toBe(true);
    expect(maxAbsDiff(r.weights, BLOCK_ERC)).toBeLessThan(1e-9);
  });

  it('says so when neither solver is allowed to converge', () => {
    const r = solveRiskParity(BLOCK, { solver: 'coordinate-descent', maxSweeps: 1, maxNewtonIterations: 0 });
    expect(r.diagnostics.converged).toBe(false);
    expect(r.diagnostics.kktResidual).toBeGreaterThan(1e-10);
    expect(r.warnings.map((w) => w.code)).toContain('not-converged');
  });

  it('uses coordinate descent first for large dense Σ, Newton (Woodbury) for a factor model of the same size', () => {
    const n = DENSE_NEWTON_MAX_N + 50;
    const factor = randomFactorModel(n, 4, 11);
    const dense: DenseRiskModel = { kind: 'dense', n, cov: toDenseCovariance(factor) };
    const d = solveRiskParity(dense);
    const f = solveRiskParity(factor);
    expect(d.diagnostics.solver).toBe('coordinate-descent');
    expect(f.diagnostics.solver).toBe('newton-woodbury');
    expect(d.diagnostics.converged && f.diagnostics.converged).toBe(true);
    expect(maxAbsDiff(d.weights, f.weights)).toBeLessThan(1e-10);
  });

  it('accepts a rank-deficient (positive semi-definite) factor covariance', () => {
    // F = vvᵀ with v = (0.2, 0.1): rank 1, so no Cholesky factor exists.
    const model: FactorRiskModel = {
      kind: 'factor',
      n: 4,
      k: 2,
      factorNames: ['a', 'b'],
      loadings: Float64Array.of(1, 0.2, 0.9, -0.3, 1.1, 0.5, 0.8, 0),
      factorCov: Float64Array.of(0.04, 0.02, 0.02, 0.01),
      specificVar: Float64Array.of(0.01, 0.02, 0.015, 0.03),
    };
    const f = solveRiskParity(model);
    const d = solveRiskParity({ kind: 'dense', n: 4, cov: toDenseCovariance(model) });
    expect(f.diagnostics.solver).toBe('newton-woodbury');
    expect(f.diagnostics.converged).toBe(true);
    expect(maxAbsDiff(f.weights, d.weights)).toBeLessThan(1e-12);
  });

  it('solves a 2000-asset factor model in O(NK²) per step, fast', () => {
    const model = randomFactorModel(2000, 10, 2024);
    const r = solveRiskParity(model);
    expect(r.diagnostics.converged).toBe(true);
    expect(r.diagnostics.kktResidual).toBeLessThanOrEqual(1e-10);
    expect(r.details.newtonIterations).toBeLessThanOrEqual(20);
    // Equal risk contributions checked with the shared product (never N×N).
    const s = covTimes(model, r.weights, new Float64Array(2000));
    let variance = 0;
    for (let i = 0; i < 2000; i++) variance += r.weights[i] * s[i];
    let worst = 0;
    for (let i = 0; i < 2000; i++) worst = Math.max(worst, Math.abs((r.weights[i] * s[i]) / variance - 1 / 2000));
    expect(worst).toBeLessThan(1e-12);
  });
});

describe('warm start', () => {
  it('from the previous result: same answer as a cold start with fewer iterations (factor model)', () => {
    const base = randomFactorModel(300, 5, 7);
    const first = solveRiskParity(base);
    for (const seed of [1, 2, 3]) {
      const draw = perturbed(base, seed);
      const cold = solveRiskParity(draw);
      const warm = solveRiskParity(draw, { warmStart: first.warmStart });
      expect(warm.details.warmStarted).toBe(true);
      expect(cold.details.warmStarted).toBe(false);
      expect(warm.diagnostics.converged).toBe(true);
      expect(maxAbsDiff(warm.weights, cold.weights)).toBeLessThan(1e-12);
      expect(warm.diagnostics.iterations).toBeLessThan(cold.diagnostics.iterations);
    }
  });

  it('from the previous result with coordinate descent, dense Σ: fewer sweeps, same answer', () => {
    const base = randomFactorModel(60, 3, 99);
    const denseBase: DenseRiskModel = { kind: 'dense', n: 60, cov: toDenseCovariance(base) };
    const draw: DenseRiskModel = { kind: 'dense', n: 60, cov: toDenseCovariance(perturbed(base, 5)) };
    const first = solveRiskParity(denseBase, { solver: 'coordinate-descent' });
    const cold = solveRiskParity(draw, { solver: 'coordinate-descent' });
    const warm = solveRiskParity(draw, { solver: 'coordinate-descent', warmStart: first.warmStart });
    expect(warm.details.coordinateSweeps).toBeLessThan(cold.details.coordinateSweeps);
    expect(maxAbsDiff(warm.weights, cold.weights)).toBeLessThan(1e-10);
  });

  it('accepts plain positive weights, and ignores (with a warning) an unusable warm start', () => {
    const cold = solveRiskParity(BLOCK);
    const fromWeights = solveRiskParity(BLOCK, { warmStart: Float64Array.from(BLOCK_ERC) });
    expect(fromWeights.details.warmStarted).toBe(true);
    expect(fromWeights.diagnostics.iterations).toBeLessThan(cold.diagnostics.iterations);
    expect(maxAbsDiff(fromWeights.weights, cold.weights)).toBeLessThan(1e-14);
    for (const bad of [[0.5, 0.5], [0.5, -0.1, 0.3, 0.3], 'x', { kind: 'risk-parity', x: Float64Array.of(1, 1) }]) {
      const r = solveRiskParity(BLOCK, { warmStart: bad });
      expect(r.details.warmStarted).toBe(false);
      expect(r.warnings.map((w) => w.code)).toContain('warm-start-ignored');
      expect(maxAbsDiff(r.weights, cold.weights)).toBeLessThan(1e-15);
    }
  });

  it('a reused workspace gives identical results', () => {
    const model = randomFactorModel(120, 4, 31);
    const ws = createRiskParityWorkspace(model);
    const a = solveRiskParity(model, { workspace: ws });
    const b = solveRiskParity(perturbed(model, 8), { workspace: ws });
    const c = solveRiskParity(model, { workspace: ws });
    expect(Array.from(c.weights)).toEqual(Array.from(a.weights));
    expect(Array.from(b.weights)).toEqual(Array.from(solveRiskParity(perturbed(model, 8)).weights));
  });
});

describe('caller constraints are reported, not applied', () => {
  it('upper bounds and a group limit the ERC weights break are named in a warning; weights are not clipped', () => {
    const groups = [{ name: 'rates', members: Int32Array.of(0, 1), min: -Infinity, max: 0.5 }];
    const r = solveRiskParity(BLOCK, { constraints: constraintSet(4, 0.3, groups), assetNames: ['A', 'B', 'C', 'D'] });
    expect(maxAbsDiff(r.weights, BLOCK_ERC)).toBeLessThan(1e-9);
    const warning = r.warnings.find((w) => w.code === 'constraints-not-applied');
    expect(warning).toBeDefined();
    expect(warning?.message).toContain("upper bound on asset 'A' (index 0)");
    expect(warning?.message).toContain("group 'rates'");
    expect(warning?.message).not.toContain("asset 'B'");
  });

  it('a non-unit budget is reported as not applied (risk parity always invests 1)', () => {
    const r = solveRiskParity(BLOCK, { constraints: { ...constraintSet(4, Infinity), budget: 0.8 } });
    expect(r.warnings.map((w) => w.code)).toEqual(['constraints-not-applied']);
    expect(r.warnings[0].message).toMatch(/budget 0\.8/);
  });

  it('plain long-only, budget 1 constraints produce no warning', () => {
    const r = solveRiskParity(BLOCK, { constraints: constraintSet(4, 1) });
    expect(r.warnings).toEqual([]);
  });
});
