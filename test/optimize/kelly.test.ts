import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { crraUtility, expectedUtility, kelly, KellyWorkspace } from '../../src/optimize/kelly.js';
import { estimateMultipliers, kktResidual } from '../../src/optimize/kkt.js';
import { QpWorkspace } from '../../src/optimize/qp.js';
import type { QpProblem } from '../../src/optimize/qp-types.js';
import { OptimizationError, type ConstraintSet } from '../../src/optimize/types.js';

// Invented scenario returns (per period) for behaviour checks; published values are in
// test/reference/kelly.test.ts.
const scenarios = Float64Array.from([
  0.05, 0.12, -0.02,
  -0.03, -0.08, 0.01,
  0.02, 0.15, 0.0,
  0.01, -0.1, 0.03,
  0.04, 0.09, -0.01,
  -0.02, 0.02, 0.02,
]);
const S = 6;
const cs: ConstraintSet = { n: 3, lower: new Float64Array(3), upper: new Float64Array(3).fill(Infinity), budget: 1, groups: [] };

describe('kelly', () => {
  it('maximises the expected utility: no feasible nearby point does better', () => {
    const result = kelly(scenarios, S, cs);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.diagnostics.kktResidual).toBeLessThan(1e-9);
    const best = expectedUtility(scenarios, S, result.weights, 1);
    expect(best).toBeCloseTo(result.expectedUtility, 15);
    for (const [a, b] of [
      [0, 1],
      [1, 2],
      [0, 2],
    ]) {
      for (const step of [1e-4, -1e-4]) {
        const w = Float64Array.from(result.weights);
        w[a] += step;
        w[b] -= step;
        if (w[a] < 0 || w[b] < 0) continue;
        expect(expectedUtility(scenarios, S, w, 1)).toBeLessThanOrEqual(best + 1e-15);
      }
    }
  });

  it('lower fractions are more cautious (less weight on the most volatile asset)', () => {
    const full = kelly(scenarios, S, cs);
    const quarter = kelly(scenarios, S, cs, { fraction: 0.25 });
    expect(quarter.weights[1]).toBeLessThan(full.weights[1]);
  });

  it('warm start from the previous optimum converges at once', () => {
    const base = kelly(scenarios, S, cs);
    const again = kelly(scenarios, S, cs, { warmStart: base.warmStart });
    expect(again.newtonIterations).toBe(0);
    for (let i = 0; i < 3; i++) expect(again.weights[i]).toBeCloseTo(base.weights[i], 12);
  });

  it('CRRA utility is continuous at γ = 1 (log)', () => {
    expect(crraUtility(1.3, 1 + 1e-9)).toBeCloseTo(Math.log(1.3), 9);
    // γ = 2: u(W) = 1 − 1/W.
    expect(crraUtility(1.25, 2)).toBeCloseTo(0.2, 15);
    expect(expectedUtility(Float64Array.from([-1.5]), 1, Float64Array.from([1]), 1)).toBe(-Infinity);
  });

  it('reports invalid inputs and markets where every allocation can be wiped out', () => {
    expect(() => kelly(scenarios, S, cs, { fraction: 1.5 })).toThrow(OptimizationError);
    expect(() => kelly(scenarios, 5, cs)).toThrow(/scenario matrix/);
    // One asset that loses everything in one scenario and must be held entirely (budget, one asset).
    const single: ConstraintSet = { n: 1, lower: new Float64Array(1), upper: new Float64Array(1).fill(Infinity), budget: 1, groups: [] };
    expect(() => kelly(Float64Array.from([0.5, -1]), 2, single)).toThrow(/wealth positive/);
  });
});

/** Invented S×N returns: a common factor plus noise, monthly-sized (for behaviour checks only). */
function randomScenarios(count: number, n: number, seed: string): Float64Array {
  const random = seedrandom(seed);
  const out = new Float64Array(count * n);
  for (let s = 0; s < count; s++) {
    const common = 0.04 * (random() - 0.5);
    for (let i = 0; i < n; i++) out[s * n + i] = 0.004 + 0.01 * (i % 3) * 0.1 + common + 0.08 * (random() - 0.5);
  }
  return out;
}

/** Long-only, each asset ≤ 25 %, the first three assets together ≤ 40 % (bounds and a group bind). */
function boundedSet(n: number): ConstraintSet {
  return {
    n,
    lower: new Float64Array(n),
    upper: new Float64Array(n).fill(0.25),
    budget: 1,
    groups: [{ name: 'first-three', members: Int32Array.from([0, 1, 2]), min: -Infinity, max: 0.4 }],
  };
}

/**
 * KKT residual of the Kelly problem at w, independent of the solver's multipliers: the gradient
 * ∇φ = Σ p_s W_s^{−γ} r_s computed here, multipliers fitted by kkt.ts's estimateMultipliers
 * (Lawson–Hanson NNLS) for the first-order conditions −∇φ = ν1 + Σν_g 1_g + z (Nocedal & Wright,
 * Theorem 12.1), as a QP with H = 0 and c = ∇φ.
 */
function independentKktResidual(scenarios: Float64Array, count: number, constraints: ConstraintSet, w: Float64Array, gamma: number): number {
  const n = constraints.n;
  const g = new Float64Array(n);
  for (let s = 0; s < count; s++) {
    let wealth = 1;
    for (let i = 0; i < n; i++) wealth += scenarios[s * n + i] * w[i];
    for (let i = 0; i < n; i++) g[i] += (scenarios[s * n + i] * Math.pow(wealth, -gamma)) / count;
  }
  const problem: QpProblem = { hessian: { kind: 'dense', n, matrix: new Float64Array(n * n) }, linear: g, constraints };
  return kktResidual(problem, w, estimateMultipliers(problem, w));
}

describe('kelly: workspaces, warm starts and the convergence test', () => {
  const n = 8;
  const count = 60;
  const base = randomScenarios(count, n, 'base');
  const constraints = boundedSet(n);

  it('the reported KKT residual agrees with an independent multiplier fit, cold and warm-started, log and half Kelly', () => {
    for (const fraction of [1, 0.5]) {
      const gamma = 1 / fraction;
      const cold = kelly(base, count, constraints, { fraction });
      expect(cold.diagnostics.converged).toBe(true);
      expect(independentKktResidual(base, count, constraints, cold.weights, gamma)).toBeLessThan(1e-9);
      // Perturbed scenarios from the base optimum, as the stress engine does per draw.
      for (const seed of ['a', 'b', 'c', 'd']) {
        const moved = randomScenarios(count, n, seed);
        for (let k = 0; k < moved.length; k++) moved[k] = 0.7 * base[k] + 0.3 * moved[k];
        const warm = kelly(moved, count, constraints, { fraction, warmStart: cold.warmStart });
        expect(warm.diagnostics.converged).toBe(true);
        expect(warm.newtonIterations).toBeGreaterThanOrEqual(1);
        expect(warm.diagnostics.kktResidual).toBeLessThan(1e-11);
        expect(independentKktResidual(moved, count, constraints, warm.weights, gamma)).toBeLessThan(1e-9);
        // The same optimum from a cold start (strictly concave objective: one maximiser).
        const again = kelly(moved, count, constraints, { fraction });
        for (let i = 0; i < n; i++) expect(Math.abs(warm.weights[i] - again.weights[i])).toBeLessThan(1e-10);
        expect(warm.growthRate).toBeCloseTo(expectedUtility(moved, count, warm.weights, 1), 14);
        expect(warm.expectedUtility).toBeCloseTo(expectedUtility(moved, count, warm.weights, gamma), 14);
      }
    }
  });

  it('a reused KellyWorkspace (or one attached to a reused QpWorkspace) gives bit-identical results across shapes', () => {
    const kellyWorkspace = new KellyWorkspace();
    const qpWorkspace = new QpWorkspace();
    const cases: [Float64Array, number, ConstraintSet][] = [
      [base, count, constraints],
      [scenarios, S, cs],
      [randomScenarios(25, n, 'short'), 25, constraints],
      [base, count, constraints],
    ];
    for (const [rows, rowCount, set] of cases) {
      const fresh = kelly(rows, rowCount, set);
      const reused = kelly(rows, rowCount, set, { kellyWorkspace });
      const attached = kelly(rows, rowCount, set, { workspace: qpWorkspace });
      for (const other of [reused, attached]) {
        expect(Array.from(other.weights)).toEqual(Array.from(fresh.weights));
        expect(other.expectedUtility).toBe(fresh.expectedUtility);
        expect(other.newtonIterations).toBe(fresh.newtonIterations);
      }
    }
  });

  it('scenario weights as counts of distinct rows give the optimum of the replicated rows', () => {
    // Rows 0..9 of `base`, row s repeated 1 + (s mod 3) times, against weights 1 + (s mod 3).
    const distinct = 10;
    const counts = Float64Array.from({ length: distinct }, (_, s) => 1 + (s % 3));
    const replicated: number[] = [];
    for (let s = 0; s < distinct; s++) for (let c = 0; c < counts[s]; c++) replicated.push(...base.subarray(s * n, (s + 1) * n));
    const byCounts = kelly(base.subarray(0, distinct * n), distinct, constraints, { scenarioWeights: counts });
    const byRows = kelly(Float64Array.from(replicated), replicated.length / n, constraints);
    for (let i = 0; i < n; i++) expect(Math.abs(byCounts.weights[i] - byRows.weights[i])).toBeLessThan(1e-10);
    expect(Math.abs(byCounts.growthRate - byRows.growthRate)).toBeLessThan(1e-14);
  });

  it('ignores a warm start with non-finite weights and solves from a cold start', () => {
    const cold = kelly(scenarios, S, cs);
    const broken = { kind: 'kelly', weights: Float64Array.from([Number.NaN, 0.5, 0.5]), qp: undefined };
    const result = kelly(scenarios, S, cs, { warmStart: broken });
    expect(result.diagnostics.converged).toBe(true);
    for (let i = 0; i < 3; i++) expect(Math.abs(result.weights[i] - cold.weights[i])).toBeLessThan(1e-12);
  });

  it('rejects non-finite scenario returns', () => {
    for (const bad of [Number.NaN, Infinity, -Infinity]) {
      const rows = Float64Array.from(scenarios);
      rows[7] = bad;
      expect(() => kelly(rows, S, cs)).toThrow(/finite/);
    }
  });
});
