import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { QpForecastSensitivity } from '../../src/optimize/forecast-sensitivity-qp.js';
import { patternOf } from '../../src/optimize/forecast-sensitivity.js';
import { meanVariance, meanVarianceProblem } from '../../src/optimize/mean-variance.js';
import { solveQp } from '../../src/optimize/qp.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';

/** A random positive-definite covariance (monthly scale) from a seed-free arbitrary. */
function covarianceFrom(n: number, entries: number[], diag: number[]): Float64Array {
  const k = 2;
  const cov = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let a = 0; a < k; a++) s += entries[i * k + a] * entries[j * k + a];
      cov[i * n + j] = 0.002 * s + (i === j ? 0.0005 + 0.002 * diag[i] : 0);
    }
  }
  return cov;
}

const problemArbitrary = fc
  .integer({ min: 3, max: 12 })
  .chain((n) =>
    fc.record({
      n: fc.constant(n),
      entries: fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 2 * n, maxLength: 2 * n }),
      diag: fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: n, maxLength: n }),
      mean: fc.array(fc.double({ min: 0, max: 0.015, noNaN: true }), { minLength: n, maxLength: n }),
      cap: fc.double({ min: 1.3 / n, max: 0.9, noNaN: true }),
      groupSize: fc.integer({ min: 0, max: n - 1 }),
      groupMax: fc.double({ min: 0.3, max: 0.8, noNaN: true }),
      riskAversion: fc.double({ min: 1, max: 10, noNaN: true }),
      asset: fc.integer({ min: 0, max: n - 1 }),
      fraction: fc.double({ min: 0.01, max: 0.95, noNaN: true }),
      up: fc.boolean(),
    }),
  );

/** The dense problem an arbitrary draw describes: long-only, a common cap, an optional group maximum. */
function denseCase(a: { n: number; entries: number[]; diag: number[]; mean: number[]; cap: number; groupSize: number; groupMax: number }): { model: DenseRiskModel; mean: Float64Array; constraints: ConstraintSet } {
  const n = a.n;
  const constraints: ConstraintSet = {
    n,
    lower: new Float64Array(n),
    upper: new Float64Array(n).fill(a.cap),
    budget: 1,
    groups: a.groupSize > 0 ? [{ name: 'g', members: Int32Array.from({ length: a.groupSize }, (_, i) => i), min: -Infinity, max: Math.max(a.groupMax, 0) }] : [],
  };
  return { model: { kind: 'dense', n, cov: covarianceFrom(n, a.entries, a.diag) }, mean: Float64Array.from(a.mean), constraints };
}

describe('QpForecastSensitivity', () => {
  it('property: shifting a forecast by less than its reported break-even never changes the active pattern, and the optimum there is the linear prediction', () => {
    let tested = 0;
    fc.assert(
      fc.property(problemArbitrary, (a) => {
        const n = a.n;
        const { model, mean, constraints } = denseCase(a);
        let base;
        try {
          base = meanVariance(model, mean, constraints, a.riskAversion);
        } catch {
          return true; // infeasible caps and group: nothing to test
        }
        const problem = meanVarianceProblem(model, mean, constraints, a.riskAversion);
        const sensitivity = new QpForecastSensitivity(problem, base.solution);
        const r = sensitivity.shiftsOf(a.asset);
        const limit = a.up ? r.up : r.down;
        if (limit === null || limit < 1e-6) return true;
        const t = (a.up ? 1 : -1) * a.fraction * limit;
        const linear = Float64Array.from(mean);
        linear[a.asset] += t;
        const moved = solveQp({ ...problem, linear }).x;
        const before = patternOf(constraints, base.weights);
        const after = patternOf(constraints, moved);
        expect(Array.from(after.assets)).toEqual(Array.from(before.assets));
        expect(Array.from(after.groups)).toEqual(Array.from(before.groups));
        for (let j = 0; j < n; j++) expect(Math.abs(moved[j] - (base.weights[j] + t * r.direction[j]))).toBeLessThan(1e-8);
        tested++;
        return true;
      }),
      { numRuns: 200, seed: 1202 },
    );
    // Most random problems have a finite break-even in the chosen direction.
    expect(tested).toBeGreaterThan(100);
  });

  it('property: past the break-even, the optimum found by following the path through its breakpoints equals a fresh solve', () => {
    let followed = 0;
    fc.assert(
      fc.property(problemArbitrary, fc.double({ min: 1.01, max: 30, noNaN: true }), (a, beyond) => {
        const n = a.n;
        const { model, mean, constraints } = denseCase(a);
        let base;
        try {
          base = meanVariance(model, mean, constraints, a.riskAversion);
        } catch {
          return true;
        }
        const problem = meanVarianceProblem(model, mean, constraints, a.riskAversion);
        const sensitivity = new QpForecastSensitivity(problem, base.solution);
        const r = sensitivity.shiftsOf(a.asset);
        const limit = a.up ? r.up : r.down;
        if (limit === null || limit < 1e-6) return true;
        const t = (a.up ? 1 : -1) * beyond * limit;
        const linear = Float64Array.from(mean);
        linear[a.asset] += t;
        const fresh = solveQp({ ...problem, linear }).x;
        const ours = sensitivity.weightsAt(a.asset, t, r);
        for (let j = 0; j < n; j++) expect(Math.abs(ours[j] - fresh[j])).toBeLessThan(1e-8);
        followed += sensitivity.pathFollows;
        return true;
      }),
      { numRuns: 200, seed: 1203 },
    );
    expect(followed).toBeGreaterThan(100);
  });

  it('an asset at a bound: only its own multiplier moves, so lowering an asset at its lower bound never changes anything', () => {
    const n = 3;
    const cov = Float64Array.of(0.0025, 0.0005, 0.0002, 0.0005, 0.0036, 0.0004, 0.0002, 0.0004, 0.0049);
    const model: DenseRiskModel = { kind: 'dense', n, cov };
    const constraints: ConstraintSet = { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(1), budget: 1, groups: [] };
    const mean = Float64Array.of(0.01, 0.012, -0.01);
    const result = meanVariance(model, mean, constraints, 4);
    expect(result.weights[2]).toBe(0);
    const sensitivity = new QpForecastSensitivity(meanVarianceProblem(model, mean, constraints, 4), result.solution);
    const r = sensitivity.shiftsOf(2);
    expect(r.down).toBeNull();
    // The shift up that brings it in equals its bound multiplier z = (Hx − c)_2 − ν.
    expect(r.up).toBeCloseTo(result.solution.multipliers.bounds[2], 15);
    expect(r.changesUp).toEqual([{ kind: 'asset', index: 2, from: -1, to: 0 }]);
    expect(Array.from(r.direction)).toEqual([0, 0, 0]);
  });

  it('a singular covariance that is positive definite on the budget plane (augmented factorisation): ∂w/∂μ = P/(sγ), P = I − 11ᵀ/n', () => {
    // Σ = s·(I − 11ᵀ/n) has the null vector 1, which the budget rules out: the optimum is unique and
    // Z(ZᵀΣZ)⁻¹Zᵀ/γ = P/(sγ) (the REFERENCES.md sensitivity identity with Z spanning 1⊥).
    const n = 3;
    const sc = 0.01;
    const cov = Float64Array.from({ length: n * n }, (_, k) => sc * ((Math.floor(k / n) === k % n ? 1 : 0) - 1 / n));
    const model: DenseRiskModel = { kind: 'dense', n, cov };
    const constraints: ConstraintSet = { n, lower: new Float64Array(n).fill(-Infinity), upper: new Float64Array(n).fill(Infinity), budget: 1, groups: [] };
    const mean = Float64Array.of(0.01, 0.012, 0.008);
    const result = meanVariance(model, mean, constraints, 4);
    expect(result.solution.regularisation).toBe('augmented');
    const sensitivity = new QpForecastSensitivity(meanVarianceProblem(model, mean, constraints, 4), result.solution);
    for (let i = 0; i < n; i++) {
      const d = sensitivity.shiftsOf(i).direction;
      for (let j = 0; j < n; j++) expect(d[j]).toBeCloseTo(((i === j ? 1 : 0) - 1 / n) / (sc * 4), 9);
    }
  });

  it('assets with equal bounds and equality groups never change state; shifting them changes nothing', () => {
    const n = 4;
    const cov = Float64Array.from({ length: n * n }, (_, k) => (Math.floor(k / n) === k % n ? 0.004 : 0.001));
    const model: DenseRiskModel = { kind: 'dense', n, cov };
    const constraints: ConstraintSet = {
      n,
      lower: Float64Array.of(0, 0.1, 0, 0),
      upper: Float64Array.of(1, 0.1, 1, 1),
      budget: 1,
      groups: [{ name: 'pair', members: Int32Array.of(2, 3), min: 0.5, max: 0.5 }],
    };
    const mean = Float64Array.of(0.01, 0.02, 0.006, 0.012);
    const result = meanVariance(model, mean, constraints, 4);
    const problem = meanVarianceProblem(model, mean, constraints, 4);
    const sensitivity = new QpForecastSensitivity(problem, result.solution);
    expect(sensitivity.shiftsOf(1)).toMatchObject({ up: null, down: null });
    for (let i = 0; i < n; i++) {
      const r = sensitivity.shiftsOf(i);
      for (const c of [...r.changesUp, ...r.changesDown]) expect(c.kind === 'group' || c.index !== 1).toBe(true);
      for (const c of [...r.changesUp, ...r.changesDown]) expect(c.kind).toBe('asset');
      // Past any breakpoint the followed path agrees with a fresh solve.
      for (const t of [0.05, -0.05]) {
        const linear = Float64Array.from(mean);
        linear[i] += t;
        const fresh = solveQp({ ...problem, linear }).x;
        const ours = sensitivity.weightsAt(i, t, r);
        for (let j = 0; j < n; j++) expect(Math.abs(ours[j] - fresh[j])).toBeLessThan(1e-9);
      }
    }
  });

  it('refuses a non-unique optimum (zero risk along an allowed direction) instead of reporting shifts', () => {
    const n = 2;
    const model: DenseRiskModel = { kind: 'dense', n, cov: Float64Array.of(0.01, 0.01, 0.01, 0.01) };
    const constraints: ConstraintSet = { n, lower: new Float64Array(n), upper: new Float64Array(n).fill(1), budget: 1, groups: [] };
    const mean = Float64Array.of(0.01, 0.01);
    const result = meanVariance(model, mean, constraints, 4);
    expect(() => new QpForecastSensitivity(meanVarianceProblem(model, mean, constraints, 4), result.solution)).toThrow(/not unique/);
  });
});
