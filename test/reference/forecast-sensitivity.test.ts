import { readFileSync } from 'node:fs';
import { Matrix, inverse } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import type { FactorRiskModel, RiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { KELLY_SOLVES_PER_ASSET, KellyForecastSensitivity } from '../../src/optimize/forecast-sensitivity-kelly.js';
import { QpForecastSensitivity } from '../../src/optimize/forecast-sensitivity-qp.js';
import { oneWayTurnover, patternOf, type ActivePattern } from '../../src/optimize/forecast-sensitivity.js';
import { kelly } from '../../src/optimize/kelly.js';
import { kktReport } from '../../src/optimize/kkt.js';
import { meanVariance, meanVarianceProblem, type RiskAversion } from '../../src/optimize/mean-variance.js';
import { solveQp, type QpProblem } from '../../src/optimize/qp.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { ex3Means, ex3Model, ex4fMeans, ex4fModel, parkMiller } from '../helpers/reference-data.js';
import { solveWithQuadprog } from '../helpers/quadprog.js';

// Outside checks of the break-even forecast shifts (src/optimize/forecast-sensitivity-*.ts).
// Sources are named beside each check.

function shifted(problem: QpProblem, i: number, t: number): QpProblem {
  const linear = Float64Array.from(problem.linear);
  linear[i] += t;
  return { ...problem, linear };
}

function samePattern(a: ActivePattern, b: ActivePattern): boolean {
  return a.assets.every((s, i) => s === b.assets[i]) && a.groups.every((s, g) => s === b.groups[g]);
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

function denseHessian(problem: QpProblem): Float64Array {
  const h = problem.hessian;
  if (h.kind === 'dense') return h.matrix.map((v) => v * (h.scale ?? 1));
  const factorOnly = toDenseCovariance({ ...h.model, specificVar: new Float64Array(h.model.n) });
  const out = factorOnly.map((v) => v * h.factorScale);
  for (let i = 0; i < h.model.n; i++) out[i * h.model.n + i] += h.specificScale * h.model.specificVar[i];
  return out;
}

// ---------------------------------------------------------------------------------------------
// The committed fixture (scripts/reference/forecast_sensitivity_reference.py): cvxpy 1.9.3 with
// CLARABEL, numpy 2.4.6 — brute-force bisection on the pattern of cvxpy's optimum.

interface FixtureShift {
  asset: number;
  side: 'up' | 'down';
  shift: number | null;
  below?: { shift: number; weights: number[]; pattern: { assets: number[]; groups: number[] } };
  past?: { shift: number; weights: number[]; pattern: { assets: number[]; groups: number[] } };
}
interface FixtureCase {
  kind: 'dense' | 'factor';
  covariance?: number[][];
  loadings?: number[][];
  factorCovariance?: number[][];
  specificVariance?: number[];
  riskAversion: RiskAversion;
  mean: number[];
  baseWeights: number[];
  basePattern: { assets: number[]; groups: number[] };
  shifts: FixtureShift[];
}
interface Fixture {
  source: string;
  bisectionRelativeTolerance: number;
  constraints: { lower: number; upper: number; budget: number; groups: { name: string; members: number[]; min: number | null; max: number | null }[] };
  cases: FixtureCase[];
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/forecast-sensitivity.json', import.meta.url), 'utf8')) as Fixture;

function fixtureConstraints(n: number): ConstraintSet {
  const c = fixture.constraints;
  return {
    n,
    lower: new Float64Array(n).fill(c.lower),
    upper: new Float64Array(n).fill(c.upper),
    budget: c.budget,
    groups: c.groups.map((g) => ({ name: g.name, members: Int32Array.from(g.members), min: g.min ?? -Infinity, max: g.max ?? Infinity })),
  };
}

function fixtureModel(c: FixtureCase): RiskModel {
  const n = c.mean.length;
  if (c.kind === 'dense') return { kind: 'dense', n, cov: Float64Array.from((c.covariance ?? []).flat()) };
  const k = (c.factorCovariance ?? []).length;
  const model: FactorRiskModel = {
    kind: 'factor',
    n,
    k,
    factorNames: Array.from({ length: k }, (_, a) => `f${a}`),
    loadings: Float64Array.from((c.loadings ?? []).flat()),
    factorCov: Float64Array.from((c.factorCovariance ?? []).flat()),
    specificVar: Float64Array.from(c.specificVariance ?? []),
  };
  return model;
}

function setUp(c: FixtureCase): { problem: QpProblem; sensitivity: QpForecastSensitivity; x: Float64Array } {
  const n = c.mean.length;
  const constraints = fixtureConstraints(n);
  const model = fixtureModel(c);
  const mean = Float64Array.from(c.mean);
  const problem = meanVarianceProblem(model, mean, constraints, c.riskAversion);
  const result = meanVariance(model, mean, constraints, c.riskAversion);
  return { problem, sensitivity: new QpForecastSensitivity(problem, result.solution), x: result.weights };
}

describe(`break-even shifts against brute force with cvxpy (${fixture.source})`, () => {
  for (const c of fixture.cases) {
    it(`${c.kind} covariance, caps and two groups: every shift, both ways, matches the bisection; cvxpy's optimum just below keeps the pattern and just past shows the reported change`, () => {
      const { sensitivity, x } = setUp(c);
      expect(maxAbsDiff(x, c.baseWeights)).toBeLessThan(1e-7);
      expect(Array.from(sensitivity.assetState)).toEqual(c.basePattern.assets);
      expect(Array.from(sensitivity.groupState)).toEqual(c.basePattern.groups);
      for (const entry of c.shifts) {
        const r = sensitivity.shiftsOf(entry.asset);
        const ours = entry.side === 'up' ? r.up : r.down;
        const changes = entry.side === 'up' ? r.changesUp : r.changesDown;
        if (entry.shift === null) {
          expect(ours, `asset ${entry.asset} ${entry.side}`).toBeNull();
          continue;
        }
        expect(ours, `asset ${entry.asset} ${entry.side}`).not.toBeNull();
        // The bisection classifies cvxpy's optimum with a 1e-6 tolerance, so it stops a little early.
        expect(Math.abs((ours as number) - entry.shift)).toBeLessThan(2e-3 * entry.shift + 1e-7);
        const below = entry.below as NonNullable<FixtureShift['below']>;
        const past = entry.past as NonNullable<FixtureShift['past']>;
        expect(below.pattern).toEqual(c.basePattern);
        expect(past.pattern).not.toEqual(c.basePattern);
        for (const change of changes) {
          const state = change.kind === 'asset' ? past.pattern.assets[change.index] : past.pattern.groups[change.index];
          expect(state, `${change.kind} ${change.index}`).toBe(change.to);
        }
        // Our exact optimum at cvxpy's shifts (linear below, re-solved past) equals cvxpy's.
        const sign = entry.side === 'up' ? 1 : -1;
        expect(maxAbsDiff(sensitivity.weightsAt(entry.asset, sign * below.shift, r), below.weights)).toBeLessThan(1e-6);
        expect(maxAbsDiff(sensitivity.weightsAt(entry.asset, sign * past.shift, r), past.weights)).toBeLessThan(1e-6);
      }
    });
  }
});

describe('break-even shifts against quadprog (Goldfarb & Idnani 1983), tight on both sides', () => {
  for (const c of fixture.cases) {
    it(`${c.kind}: the optimum at (1 − 1e-4)·shift keeps the pattern and at (1 + 1e-4)·shift has changed as reported`, () => {
      const { problem, sensitivity, x } = setUp(c);
      const h = denseHessian(problem);
      const base = patternOf(problem.constraints, x);
      let checked = 0;
      for (let i = 0; i < x.length; i++) {
        const r = sensitivity.shiftsOf(i);
        for (const [sign, t, changes] of [
          [1, r.up, r.changesUp],
          [-1, r.down, r.changesDown],
        ] as const) {
          if (t === null) continue;
          const below = solveWithQuadprog(shifted(problem, i, sign * (1 - 1e-4) * t), h);
          const past = solveWithQuadprog(shifted(problem, i, sign * (1 + 1e-4) * t), h);
          expect(samePattern(patternOf(problem.constraints, below), base), `asset ${i} ${sign > 0 ? 'up' : 'down'} below`).toBe(true);
          const after = patternOf(problem.constraints, past);
          expect(samePattern(after, base)).toBe(false);
          for (const change of changes) expect(change.kind === 'asset' ? after.assets[change.index] : after.groups[change.index]).toBe(change.to);
          checked++;
        }
      }
      expect(checked).toBeGreaterThan(8);
    });

    it(`${c.kind}: the optimum at shifts crossing breakpoints (path followed from the base factorisation) equals quadprog's, so its turnover is exact`, () => {
      const { problem, sensitivity, x } = setUp(c);
      const h = denseHessian(problem);
      for (let i = 0; i < x.length; i++) {
        const r = sensitivity.shiftsOf(i);
        // Up to 2 % a month: past several breakpoints for most assets here.
        for (const t of [0.005, -0.005, 0.02, -0.02]) {
          const ours = sensitivity.weightsAt(i, t, r);
          const theirs = solveWithQuadprog(shifted(problem, i, t), h);
          expect(maxAbsDiff(ours, theirs)).toBeLessThan(1e-9);
          expect(Math.abs(oneWayTurnover(ours, x) - oneWayTurnover(theirs, x))).toBeLessThan(1e-9);
        }
      }
      // Every one followed the path through its breakpoints with the base factorisation.
      expect(sensitivity.pathFollows).toBeGreaterThan(0);
      expect(sensitivity.resolves).toBe(0);
    });
  }
});

describe('∂w/∂μ on the base pattern against central finite differences of re-solved optima', () => {
  for (const c of fixture.cases) {
    it(`${c.kind}: every column, to 1e-6 relative`, () => {
      const { problem, sensitivity } = setUp(c);
      for (let i = 0; i < problem.constraints.n; i++) {
        const r = sensitivity.shiftsOf(i);
        const reach = Math.min(r.up ?? Infinity, r.down ?? Infinity);
        const h = Number.isFinite(reach) ? 0.25 * reach : 1e-4;
        const plus = solveQp(shifted(problem, i, h)).x;
        const minus = solveQp(shifted(problem, i, -h)).x;
        const fd = plus.map((v, j) => (v - minus[j]) / (2 * h));
        const scale = Math.max(1, ...Array.from(r.direction, Math.abs));
        expect(maxAbsDiff(fd, r.direction) / scale).toBeLessThan(1e-6);
      }
    });
  }
});

describe('the budget-only case against its closed form (Merton 1972, JFQA 7(4); REFERENCES.md "Markowitz closed forms")', () => {
  const budgetOnly = (n: number): ConstraintSet => ({ n, lower: new Float64Array(n).fill(-Infinity), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] });

  it('EX3, γ = 5: ∂w/∂μ diagonal (5.125051250513, 5.740057400574, 3.649036490365); no breakpoint ever; the optimum at a shift is Σ⁻¹(μ′ − η′1)/γ', () => {
    const model = ex3Model();
    const mean = ex3Means();
    const constraints = budgetOnly(3);
    const problem = meanVarianceProblem(model, mean, constraints, 5);
    const sensitivity = new QpForecastSensitivity(problem, meanVariance(model, mean, constraints, 5).solution);
    const diagonal = [5.125051250513, 5.740057400574, 3.649036490365]; // REFERENCES.md (computed), (1/γ)·Z(ZᵀΣZ)⁻¹Zᵀ
    const sigmaInv = inverse(new Matrix(Array.from({ length: 3 }, (_, i) => Array.from(model.cov.subarray(3 * i, 3 * i + 3)))));
    for (let i = 0; i < 3; i++) {
      const r = sensitivity.shiftsOf(i);
      expect(r.up).toBeNull();
      expect(r.down).toBeNull();
      expect(Math.abs(r.direction[i] - diagonal[i])).toBeLessThan(1e-9);
      // Closed form at μ′ = μ + t·e_i: w = Σ⁻¹(μ′ − η1)/γ, η = (1ᵀΣ⁻¹μ′ − γ)/(1ᵀΣ⁻¹1), re-derived with ml-matrix.
      const t = 0.03;
      const moved = Array.from(mean, (m, j) => m + (j === i ? t : 0));
      const a = sigmaInv.mmul(Matrix.columnVector(moved)).to1DArray().reduce((s, v) => s + v, 0);
      const cOnes = sigmaInv.mmul(Matrix.columnVector([1, 1, 1])).to1DArray().reduce((s, v) => s + v, 0);
      const eta = (a - 5) / cOnes;
      const closed = sigmaInv.mmul(Matrix.columnVector(moved.map((m) => (m - eta) / 5))).to1DArray();
      expect(maxAbsDiff(sensitivity.weightsAt(i, t, r), closed)).toBeLessThan(1e-12);
    }
  });

  it('EX4F factor form, λ_f = 4, λ_s = 10: base weights as published and ∂w/∂μ = M⁻¹ − M⁻¹11ᵀM⁻¹/(1ᵀM⁻¹1), M = λ_f BFBᵀ + λ_s D', () => {
    const model = ex4fModel();
    const mean = ex4fMeans();
    const constraints = budgetOnly(4);
    const ra = { factor: 4, specific: 10 };
    const result = meanVariance(model, mean, constraints, ra);
    // REFERENCES.md, EX4F (computed).
    expect(maxAbsDiff(result.weights, [0.383650128362, 0.248291923166, 0.196069786818, 0.171988161654])).toBeLessThan(1e-9);
    const sensitivity = new QpForecastSensitivity(meanVarianceProblem(model, mean, constraints, ra), result.solution);
    const m = denseHessian(meanVarianceProblem(model, mean, constraints, ra));
    const mInv = inverse(new Matrix(Array.from({ length: 4 }, (_, i) => Array.from(m.subarray(4 * i, 4 * i + 4)))));
    const mInv1 = mInv.mmul(Matrix.columnVector([1, 1, 1, 1])).to1DArray();
    const c = mInv1.reduce((s, v) => s + v, 0);
    for (let i = 0; i < 4; i++) {
      const column = Array.from({ length: 4 }, (_, j) => mInv.get(j, i) - (mInv1[j] * mInv1[i]) / c);
      expect(maxAbsDiff(sensitivity.shiftsOf(i).direction, column)).toBeLessThan(1e-9);
    }
  });
});

describe('scenario Kelly break-even shifts against brute-force re-solves', () => {
  it('a 5-asset long-only problem with caps: the first grid shift whose cold-started optimum changes pattern lies within the reported bracket', () => {
    // Invented scenarios from the Park–Miller LCG (REFERENCES.md): 60 monthly rows.
    const next = parkMiller(424242);
    const n = 5;
    const rows = 60;
    const scenarios = new Float64Array(rows * n);
    for (let s = 0; s < rows; s++) {
      const market = 0.06 * (next() - 0.5);
      for (let i = 0; i < n; i++) scenarios[s * n + i] = 0.004 + 0.002 * i + (0.6 + 0.2 * i) * market + 0.08 * (next() - 0.5);
    }
    const constraints: ConstraintSet = { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(0.5), budget: 1, groups: [] };
    const base = kelly(scenarios, rows, constraints, { fraction: 0.5 });
    const search = new KellyForecastSensitivity(scenarios, rows, constraints, 0.5, base);
    const basePattern = patternOf(constraints, base.weights);
    const unit = 0.002;
    let compared = 0;
    for (let i = 0; i < n; i++) {
      const r = search.shiftsOf(i, unit);
      for (const [sign, t] of [
        [1, r.up],
        [-1, r.down],
      ] as const) {
        if (t === null) continue;
        // Brute force: 400 cold solves on a grid up to twice the reported shift.
        const step = (2 * t) / 400;
        let first = Number.NaN;
        for (let k = 1; k <= 400; k++) {
          const moved = Float64Array.from(scenarios);
          for (let s = 0; s < rows; s++) moved[s * n + i] += sign * k * step;
          const w = kelly(moved, rows, constraints, { fraction: 0.5 }).weights;
          if (!samePattern(patternOf(constraints, w), basePattern)) {
            first = k * step;
            break;
          }
        }
        expect(first).toBeGreaterThanOrEqual(t - r.tolerance - 1e-12);
        expect(first).toBeLessThanOrEqual(t + r.tolerance + step + 1e-12);
        compared++;
      }
      if (base.weights[i] === 0) {
        // Held at 0: lowering its mean never changes the optimum (its column does not touch wealth).
        expect(r.down).toBeNull();
        const lowered = Float64Array.from(scenarios);
        for (let s = 0; s < rows; s++) lowered[s * n + i] -= 50 * unit;
        expect(maxAbsDiff(kelly(lowered, rows, constraints, { fraction: 0.5 }).weights, base.weights)).toBeLessThan(1e-9);
      }
      // The turnover at one unit is that of a cold re-solve there.
      const moved = Float64Array.from(scenarios);
      for (let s = 0; s < rows; s++) moved[s * n + i] += unit;
      const cold = kelly(moved, rows, constraints, { fraction: 0.5 });
      expect(Math.abs(oneWayTurnover(cold.weights, base.weights) - r.turnoverUp)).toBeLessThan(1e-8);
    }
    expect(compared).toBeGreaterThan(3);
    expect(Array.from(base.weights).some((w) => w === 0)).toBe(true);
    expect(search.solves).toBeLessThanOrEqual(n * KELLY_SOLVES_PER_ASSET);
  });
});

describe('KKT conditions of the optimum past a breakpoint', () => {
  it('the optimum reported three breakpoint-distances past the first one satisfies KKT (Nocedal & Wright, Theorem 12.1)', () => {
    const c = fixture.cases[0];
    const { problem, sensitivity } = setUp(c);
    const r = sensitivity.shiftsOf(0);
    const t = 3 * (r.up as number);
    const w = sensitivity.weightsAt(0, t, r);
    const solved = solveQp(shifted(problem, 0, t));
    expect(maxAbsDiff(w, solved.x)).toBeLessThan(1e-10);
    expect(kktReport(shifted(problem, 0, t), solved.x, solved.multipliers).max).toBeLessThan(1e-9);
  });
});
