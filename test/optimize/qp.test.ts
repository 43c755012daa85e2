import fc from 'fast-check';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import type { FactorRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { estimateMultipliers, kktReport, qpObjective } from '../../src/optimize/kkt.js';
import { solveQp, QpWorkspace, type QpProblem } from '../../src/optimize/qp.js';
import { OptimizationError, type ConstraintSet, type GroupConstraint } from '../../src/optimize/types.js';

function constraints(
  n: number,
  options: { lower?: number | number[]; upper?: number | number[]; budget?: number; groups?: GroupConstraint[] } = {},
): ConstraintSet {
  const fill = (v: number | number[] | undefined, d: number): Float64Array =>
    Array.isArray(v) ? Float64Array.from(v) : new Float64Array(n).fill(v ?? d);
  return { n, lower: fill(options.lower, 0), upper: fill(options.upper, Infinity), budget: options.budget ?? 1, groups: options.groups ?? [] };
}

function group(name: string, members: number[], min = -Infinity, max = Infinity): GroupConstraint {
  return { name, members: Int32Array.from(members), min, max };
}

/** A random SPD covariance (Wishart-like, seeded) — invented data for unit tests. */
function randomCovariance(n: number, seed: string, rank = n + 4): Float64Array {
  const rng = seedrandom(seed);
  const x = Float64Array.from({ length: n * rank }, () => (rng() - 0.5) * 0.3);
  const cov = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) for (let k = 0; k < rank; k++) cov[i * n + j] += (x[i * rank + k] * x[j * rank + k]) / rank;
  return cov;
}

function dense(n: number, matrix: Float64Array, linear: Float64Array, cs: ConstraintSet, scale = 1): QpProblem {
  return { hessian: { kind: 'dense', n, matrix, scale }, linear, constraints: cs };
}

function expectInfeasible(problem: QpProblem, reason: RegExp): void {
  let caught: unknown;
  try {
    solveQp(problem);
  } catch (error) {
    caught = error;
  }
  expect(caught).toBeInstanceOf(OptimizationError);
  expect((caught as OptimizationError).code).toBe('infeasible');
  expect((caught as OptimizationError).message).toMatch(reason);
}

describe('infeasible constraint sets are reported with a reason naming the constraint', () => {
  const n = 4;
  const cov = randomCovariance(n, 'inf');
  const mu = Float64Array.from([0.01, 0.02, 0.03, 0.04]);
  it('lower bounds above the budget', () => {
    expectInfeasible(dense(n, cov, mu, constraints(n, { lower: 0.3 })), /lower bounds sum to 1\.2, above the budget 1/);
  });
  it('upper bounds below the budget', () => {
    expectInfeasible(dense(n, cov, mu, constraints(n, { upper: 0.2 })), /upper bounds sum to 0\.8, below the budget 1/);
  });
  it('an asset whose lower bound is above its upper bound', () => {
    expectInfeasible(dense(n, cov, mu, constraints(n, { lower: [0, 0.5, 0, 0], upper: [1, 0.4, 1, 1] })), /asset 1/);
  });
  it('a group minimum above what its members may hold', () => {
    expectInfeasible(dense(n, cov, mu, constraints(n, { upper: 0.3, groups: [group('tech', [0, 1], 0.7)] })), /group "tech".*upper bounds sum to 0\.6.*minimum 0\.7/);
  });
  it('a group maximum below what the budget forces onto it', () => {
    expectInfeasible(dense(n, cov, mu, constraints(n, { upper: 0.3, groups: [group('core', [0, 1], -Infinity, 0.3)] })), /group "core".*other assets can hold at most 0\.6/);
  });
  it('overlapping groups that contradict each other (found by the elastic phase)', () => {
    // a+b ≥ 0.8 and b+c ≥ 0.8 and a+c ≥ 0.8 need Σ ≥ 1.2 over three assets, but d ≥ 0 and Σ = 1.
    const groups = [group('ab', [0, 1], 0.8), group('bc', [1, 2], 0.8), group('ac', [0, 2], 0.8)];
    expectInfeasible(dense(n, cov, mu, constraints(n, { groups })), /group "(ab|bc|ac)".*cannot be met/);
  });
  it('a fixed asset, an equality group and a cap that cannot hold together', () => {
    // x1 = 0.1 and x0 + x2 = 0.4 leave 0.5 for assets 3–5, above their cap of 0.35.
    const cs = constraints(n, {
      lower: [0, 0.1, 0, 0],
      upper: [0.5, 0.1, 0.5, 0.5],
      groups: [group('eq', [0, 2], 0.4, 0.4), group('cap', [3], -Infinity, 0.35)],
    });
    // Disjoint groups: the block capacities (0.4, ≤ 0.35, and 0.1 for the ungrouped asset) prove it.
    expectInfeasible(dense(n, cov, mu, cs), /groups "eq", "cap" and the ungrouped assets can together hold at most 0\.85, below the budget 1/);
  });
  it('disjoint groups whose minimums together exceed the budget', () => {
    const groups = [group('europe', [0, 1], 0.6), group('asia', [2, 3], 0.6)];
    expectInfeasible(dense(n, cov, mu, constraints(n, { groups })), /groups "europe", "asia".*at least 1\.2, above the budget 1/);
  });
  it('an equality group inconsistent with another', () => {
    const groups = [group('eq', [0, 1], 0.5, 0.5), group('cap', [0, 1, 2], -Infinity, 0.4)];
    expectInfeasible(dense(n, cov, mu, constraints(n, { groups })), /group "(eq|cap)"/);
  });
});

describe('singular and unbounded problems', () => {
  it('zero risk with short sales allowed and unequal returns is unbounded', () => {
    const n = 3;
    const problem = dense(n, new Float64Array(n * n), Float64Array.from([0.01, 0.02, 0.03]), constraints(n, { lower: -Infinity }));
    expect(() => solveQp(problem)).toThrow(OptimizationError);
    try {
      solveQp(problem);
    } catch (error) {
      expect((error as OptimizationError).code).toBe('unbounded');
    }
  });

  it('a rank-deficient covariance (T < N) with short sales allowed is unbounded', () => {
    const n = 8;
    const cov = randomCovariance(n, 'rank', 3);
    const mu = Float64Array.from({ length: n }, (_, i) => 0.01 * (i + 1));
    expect(() => solveQp(dense(n, cov, mu, constraints(n, { lower: -Infinity }), 5))).toThrow(/decreases without limit/);
  });

  it('zero risk and equal returns is not unbounded: the objective is constant on the budget plane', () => {
    const n = 3;
    const result = solveQp(dense(n, new Float64Array(n * n), new Float64Array(n).fill(0.02), constraints(n, { lower: -Infinity })));
    expect(result.x.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 14);
    expect(result.kktResidual).toBeLessThan(1e-12);
  });

  it('a rank-deficient covariance with long-only weights: optimal (KKT), ridge reported', () => {
    const n = 12;
    const cov = randomCovariance(n, 'rank-lo', 5);
    const mu = Float64Array.from({ length: n }, (_, i) => 0.002 * i);
    const problem = dense(n, cov, mu, constraints(n), 3);
    const result = solveQp(problem);
    expect(result.converged).toBe(true);
    expect(result.kktResidual).toBeLessThan(1e-9);
    // Independent check: multipliers estimated from x alone also satisfy KKT.
    expect(kktReport(problem, result.x, estimateMultipliers(problem, result.x)).max).toBeLessThan(1e-9);
    expect(['augmented', 'ridge', 'none']).toContain(result.regularisation);
  });

  it('a duplicated asset: the pair holds what the single asset held (objective unchanged)', () => {
    // Two identical assets make Σ singular and the split between them arbitrary; the total and the
    // objective must match the problem with the asset listed once.
    const base = randomCovariance(3, 'dup');
    const mu3 = Float64Array.from([0.02, 0.03, 0.01]);
    const single = solveQp(dense(3, base, mu3, constraints(3), 4));
    const map = [0, 1, 2, 2];
    const cov4 = Float64Array.from({ length: 16 }, (_, k) => base[map[Math.floor(k / 4)] * 3 + map[k % 4]]);
    const mu4 = Float64Array.from(map, (i) => mu3[i]);
    const problem4 = dense(4, cov4, mu4, constraints(4), 4);
    const double = solveQp(problem4);
    expect(double.x[2] + double.x[3]).toBeCloseTo(single.x[2], 10);
    expect(double.objective).toBeCloseTo(single.objective, 12);
    expect(double.kktResidual).toBeLessThan(1e-9);
  });

  it('a zero-variance (cash) asset is handled exactly by augmenting the reduced system with the budget row', () => {
    const n = 3;
    const cov = Float64Array.from([0, 0, 0, 0, 0.04, 0.01, 0, 0.01, 0.09]);
    const mu = Float64Array.from([0.01, 0.05, 0.07]);
    const result = solveQp(dense(n, cov, mu, constraints(n, { lower: -Infinity }), 2));
    expect(result.regularisation).toBe('augmented');
    // Closed form for the risky part: w = Σ_r⁻¹(μ_r − r_f)/λ (Tobin separation; Merton 1972).
    const [a, b, c] = [0.04, 0.01, 0.09];
    const det = a * c - b * b;
    const ex = [0.04, 0.06];
    expect(result.x[1]).toBeCloseTo((c * ex[0] - b * ex[1]) / det / 2, 12);
    expect(result.x[2]).toBeCloseTo((-b * ex[0] + a * ex[1]) / det / 2, 12);
  });
});

describe('special working sets', () => {
  const n = 6;
  const cov = randomCovariance(n, 'special');
  const mu = Float64Array.from([0.02, 0.01, 0.03, 0.015, 0.025, 0.005]);

  it('equality groups, fixed assets and capped groups together satisfy KKT', () => {
    const cs = constraints(n, {
      lower: [0, 0.1, 0, 0, 0, 0],
      upper: [0.5, 0.1, 0.5, 0.5, 0.5, 0.5],
      groups: [group('eq', [0, 2], 0.4, 0.4), group('cap', [3, 4, 5], -Infinity, 0.55), group('floor', [2, 5], 0.15)],
    });
    const problem = dense(n, cov, mu, cs, 6);
    const result = solveQp(problem);
    expect(result.x[1]).toBe(0.1);
    expect(result.x[0] + result.x[2]).toBeCloseTo(0.4, 12);
    expect(result.kktResidual).toBeLessThan(1e-9);
    expect(kktReport(problem, result.x, estimateMultipliers(problem, result.x)).max).toBeLessThan(1e-9);
  });

  it('overlapping group limits that the projected start breaks are restored by the elastic phase', () => {
    // Start guess (budget-only optimum, clipped) is far from both limits; the groups share asset 2.
    const cs = constraints(n, { groups: [group('left', [0, 1, 2], 0.7), group('right', [2, 3, 4], 0.5, 0.55)] });
    const problem = dense(n, cov, Float64Array.from([0, 0, 0, 0, 0, 0.2]), cs, 2);
    const result = solveQp(problem);
    expect(result.phase1Iterations).toBeGreaterThan(0);
    expect(result.x[0] + result.x[1] + result.x[2]).toBeGreaterThanOrEqual(0.7 - 1e-12);
    expect(result.kktResidual).toBeLessThan(1e-9);
    expect(kktReport(problem, result.x, estimateMultipliers(problem, result.x)).max).toBeLessThan(1e-9);
  });

  it('every asset fixed: the only feasible point is returned', () => {
    const cs = constraints(3, { lower: [0.2, 0.3, 0.5], upper: [0.2, 0.3, 0.5] });
    const result = solveQp(dense(3, randomCovariance(3, 'fixed'), Float64Array.from([1, 2, 3]), cs));
    expect(Array.from(result.x)).toEqual([0.2, 0.3, 0.5]);
    expect(result.converged).toBe(true);
  });

  it('a group covering every asset duplicates the budget without breaking the solve', () => {
    const cs = constraints(n, { groups: [group('all', [0, 1, 2, 3, 4, 5], 1, 1), group('most', [0, 1, 2, 3, 4], 0.9, 1)] });
    const problem = dense(n, cov, mu, cs, 2);
    const result = solveQp(problem);
    expect(result.kktResidual).toBeLessThan(1e-9);
  });

  it('a workspace can be reused across problems of different sizes', () => {
    const workspace = new QpWorkspace(2, 0);
    for (const size of [5, 3, 9, 3]) {
      const problem = dense(size, randomCovariance(size, `ws${size}`), Float64Array.from({ length: size }, (_, i) => 0.01 * i), constraints(size, { upper: 0.5 }), 3);
      const withWorkspace = solveQp(problem, { workspace });
      const fresh = solveQp(problem);
      expect(Array.from(withWorkspace.x)).toEqual(Array.from(fresh.x));
    }
  });
});

describe('factor Hessian (Woodbury) against the same problem expanded to dense', () => {
  it('gives the same optimum with bounds and groups, N = 120, K = 4', () => {
    const rng = seedrandom('factor-vs-dense');
    const n = 120;
    const k = 4;
    const model: FactorRiskModel = {
      kind: 'factor',
      n,
      k,
      factorNames: ['a', 'b', 'c', 'd'],
      loadings: Float64Array.from({ length: n * k }, () => rng() - 0.3),
      factorCov: Float64Array.from([0.04, 0.01, 0, 0, 0.01, 0.02, 0, 0, 0, 0, 0.01, 0.002, 0, 0, 0.002, 0.005]),
      specificVar: Float64Array.from({ length: n }, () => 0.005 + 0.02 * rng()),
    };
    const mu = Float64Array.from({ length: n }, () => 0.03 * rng());
    const cs = constraints(n, { upper: 0.05, groups: [group('first', Array.from({ length: 30 }, (_, i) => i), 0.2, 0.4)] });
    const factorProblem: QpProblem = { hessian: { kind: 'factor', model, factorScale: 3, specificScale: 7 }, linear: mu, constraints: cs };
    const scaled = { ...model, factorCov: model.factorCov.map((v) => 3 * v), specificVar: model.specificVar.map((v) => 7 * v) };
    const denseProblem = dense(n, toDenseCovariance(scaled), mu, cs);
    const a = solveQp(factorProblem);
    const b = solveQp(denseProblem);
    expect(a.hessianForm).toBe('factor');
    let diff = 0;
    for (let i = 0; i < n; i++) diff = Math.max(diff, Math.abs(a.x[i] - b.x[i]));
    expect(diff).toBeLessThan(1e-9);
    expect(a.kktResidual).toBeLessThan(1e-9);
    expect(Math.abs(qpObjective(factorProblem, a.x) - b.objective)).toBeLessThan(1e-12);
  });

  it('falls back to a dense expansion when specific variance is zero', () => {
    const model: FactorRiskModel = {
      kind: 'factor',
      n: 3,
      k: 1,
      factorNames: ['m'],
      loadings: Float64Array.from([1, 0.8, 1.2]),
      factorCov: Float64Array.from([0.04]),
      specificVar: Float64Array.from([0.01, 0, 0.02]),
    };
    const result = solveQp({ hessian: { kind: 'factor', model, factorScale: 1, specificScale: 1 }, linear: new Float64Array(3), constraints: constraints(3) });
    expect(result.hessianForm).toBe('factor-expanded');
    expect(result.kktResidual).toBeLessThan(1e-9);
  });
});

describe('properties (fast-check)', () => {
  /** A seeded random problem of size n with bounds and one group. */
  function randomProblem(n: number, seed: number): QpProblem {
    const rng = seedrandom(String(seed));
    const cov = randomCovariance(n, `p${seed}`);
    const mu = Float64Array.from({ length: n }, () => 0.05 * (rng() - 0.3));
    // A group of at most n − 1 assets capped at 0.6: the others (upper 0.6 each) take the rest.
    const members = Array.from({ length: n - 1 }, (_, i) => i + 1).filter(() => rng() < 0.5);
    const groups = members.length > 0 ? [group('g', members, -Infinity, 0.6)] : [];
    return dense(n, cov, mu, constraints(n, { lower: -0.1, upper: 0.6, groups }), 1 + 5 * rng());
  }

  it('permuting the assets permutes the weights', () => {
    fc.assert(
      fc.property(fc.integer({ min: 2, max: 9 }), fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 0, max: 1e6 }), (n, seed, permSeed) => {
        const problem = randomProblem(n, seed);
        const rng = seedrandom(String(permSeed));
        const perm = Array.from({ length: n }, (_, i) => i).sort(() => rng() - 0.5);
        // Asset j of the permuted problem is asset perm[j] of the original.
        const h = problem.hessian;
        if (h.kind !== 'dense') throw new Error('dense expected');
        const inverse = new Int32Array(n);
        perm.forEach((p, j) => (inverse[p] = j));
        const cs = problem.constraints;
        const permuted: QpProblem = {
          hessian: { ...h, matrix: Float64Array.from({ length: n * n }, (_, k) => h.matrix[perm[Math.floor(k / n)] * n + perm[k % n]]) },
          linear: Float64Array.from(perm, (p) => problem.linear[p]),
          constraints: {
            ...cs,
            lower: Float64Array.from(perm, (p) => cs.lower[p]),
            upper: Float64Array.from(perm, (p) => cs.upper[p]),
            groups: cs.groups.map((g) => ({ ...g, members: Int32Array.from(g.members, (i) => inverse[i]) })),
          },
        };
        const a = solveQp(problem).x;
        const b = solveQp(permuted).x;
        for (let j = 0; j < n; j++) expect(Math.abs(b[j] - a[perm[j]])).toBeLessThan(1e-9);
      }),
      { numRuns: 60, seed: 20240601 },
    );
  });

  it('adding a constant to every expected return leaves the optimum unchanged (budget fixed)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 2, max: 9 }), fc.integer({ min: 0, max: 1e6 }), fc.double({ min: -0.1, max: 0.1, noNaN: true }), (n, seed, shift) => {
        const problem = randomProblem(n, seed);
        const shifted: QpProblem = { ...problem, linear: problem.linear.map((v) => v + shift) };
        const a = solveQp(problem).x;
        const b = solveQp(shifted).x;
        for (let i = 0; i < n; i++) expect(Math.abs(a[i] - b[i])).toBeLessThan(1e-9);
      }),
      { numRuns: 60, seed: 7 },
    );
  });
});

describe('riskless optima of a singular covariance: the solve stops where KKT holds, not at its iteration cap', () => {
  // With H = vvᵀ (or any rank-deficient PSD H) some long-only portfolios carry zero risk, Hx ≈ 0 at
  // the optimum and c = 0, so the gradient is rounding noise. The stationarity and dual tests must
  // measure "zero" on the KKT scale G = max(‖c‖, ‖Hx‖, h·W) of kkt.ts; measured against the noise
  // itself, every rounding-sized ridge step looked like progress and the method marched along the
  // flat face until its cap (v = (0.2, 0.1, −0.3): unconverged after 200 iterations; v = (0.3, −0.1,
  // 0.2): 171 iterations; 43 % of the rank-deficient problems below: unconverged).
  const longOnly = (n: number): ConstraintSet => constraints(n);

  /** All four KKT conditions (Nocedal & Wright Thm 12.1), with the solver's multipliers and with multipliers estimated from x alone. */
  function expectKkt(problem: QpProblem, x: Float64Array, solverMultipliers: Parameters<typeof kktReport>[2], tolerance: number): void {
    for (const multipliers of [solverMultipliers, estimateMultipliers(problem, x)]) {
      const report = kktReport(problem, x, multipliers);
      expect(report.stationarity).toBeLessThanOrEqual(tolerance);
      expect(report.primalFeasibility).toBeLessThanOrEqual(tolerance);
      expect(report.dualFeasibility).toBeLessThanOrEqual(tolerance);
      expect(report.complementarity).toBeLessThanOrEqual(tolerance);
    }
  }

  function rankOne(v: number[]): QpProblem {
    const n = v.length;
    const h = Float64Array.from({ length: n * n }, (_, k) => v[Math.floor(k / n)] * v[k % n]);
    return dense(n, h, new Float64Array(n), longOnly(n));
  }

  it.each([
    [[0.2, 0.1, -0.3]],
    [[0.3, -0.1, 0.2]],
    [[0.1, -0.2, 0.05]],
    [[1, -1, 0.5]],
  ])('H = vvᵀ, v = %j: zero risk in a few iterations, KKT to rounding', (v) => {
    const problem = rankOne(v);
    const result = solveQp(problem);
    expect(result.converged).toBe(true);
    expect(result.iterations).toBeLessThanOrEqual(4);
    // wᵀvvᵀw = (vᵀw)² ≥ 0 for every w: zero (to rounding) is the global minimum (elementary bound).
    const vw = v.reduce((s, vi, i) => s + vi * result.x[i], 0);
    expect(Math.abs(vw)).toBeLessThan(1e-15);
    expectKkt(problem, result.x, result.multipliers, 1e-12);
  });

  it('rank-k covariances of 3–6 assets (k < n), both cold starts: every solve converges with KKT ≤ 1e-12', () => {
    let solves = 0;
    let iterations = 0;
    for (let n = 3; n <= 6; n++) {
      for (let k = 1; k < n; k++) {
        for (let seed = 0; seed < 6; seed++) {
          const problem = dense(n, randomCovariance(n, `riskless-${n}-${k}-${seed}`, k), new Float64Array(n), longOnly(n));
          for (const coldStart of ['projected', 'uniform'] as const) {
            const result = solveQp(problem, { coldStart });
            expect(result.converged, `n=${n} k=${k} seed=${seed} ${coldStart}`).toBe(true);
            expectKkt(problem, result.x, result.multipliers, 1e-12);
            iterations = Math.max(iterations, result.iterations);
            solves++;
          }
        }
      }
    }
    expect(solves).toBe(168);
    // An active-set solve on n ≤ 6 bounds needs at most a few working-set changes per bound.
    expect(iterations).toBeLessThanOrEqual(20);
  });
});
