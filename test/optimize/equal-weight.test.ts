import { describe, expect, it } from 'vitest';
import { equalWeight, fillEqualWeights } from '../../src/optimize/equal-weight.js';
import type { ConstraintSet } from '../../src/optimize/types.js';
import { OptimizationError } from '../../src/optimize/types.js';

// The 1/N rule (DeMiguel, Garlappi & Uppal 2009, Review of Financial Studies 22(5)): every asset
// gets the same share of the budget.

function constraints(n: number, lower: number, upper: number, budget = 1, groups: ConstraintSet['groups'] = []): ConstraintSet {
  return { n, lower: new Float64Array(n).fill(lower), upper: new Float64Array(n).fill(upper), budget, groups };
}

describe('equal weight', () => {
  it('gives 1/N of a unit budget, as a closed form with zero residual', () => {
    const r = equalWeight(8);
    expect(Array.from(r.weights)).toEqual(new Array(8).fill(0.125));
    expect(r.diagnostics).toEqual({ iterations: 0, converged: true, kktResidual: 0, solver: 'closed-form' });
    expect(r.warnings).toEqual([]);
  });

  it('scales to the budget (explicit, or the constraint set’s)', () => {
    expect(Array.from(equalWeight(4, { budget: 2 }).weights)).toEqual([0.5, 0.5, 0.5, 0.5]);
    const r = equalWeight(5, { constraints: constraints(5, 0, 1, 0.5) });
    expect(Array.from(r.weights)).toEqual(new Array(5).fill(0.1));
    expect(r.warnings).toEqual([]);
  });

  it('writes into a caller buffer without allocating', () => {
    const out = new Float64Array(3);
    const r = equalWeight(3, { out });
    expect(r.weights).toBe(out);
    expect(fillEqualWeights(new Float64Array(4), 1)).toEqual(Float64Array.of(0.25, 0.25, 0.25, 0.25));
  });

  it('rejects bad sizes and budgets', () => {
    expect(() => equalWeight(0)).toThrow(OptimizationError);
    expect(() => equalWeight(2.5)).toThrow(OptimizationError);
    expect(() => equalWeight(3, { budget: Number.NaN })).toThrow(OptimizationError);
    expect(() => equalWeight(3, { out: new Float64Array(2) })).toThrow(OptimizationError);
    expect(() => equalWeight(3, { constraints: constraints(4, 0, 1) })).toThrow(OptimizationError);
  });

  it('reports the caller’s bounds and groups it ignores, without clipping', () => {
    const groups = [{ name: 'tech', members: Int32Array.of(0, 1, 2), min: 0, max: 0.6 }];
    const r = equalWeight(4, { constraints: constraints(4, 0.3, 0.2, 1, groups), assetNames: ['a', 'b', 'c', 'd'] });
    expect(Array.from(r.weights)).toEqual([0.25, 0.25, 0.25, 0.25]);
    expect(r.warnings).toHaveLength(1);
    const message = r.warnings[0].message;
    expect(r.warnings[0].code).toBe('constraints-not-applied');
    expect(message).toContain('equal-weight');
    // 4 lower-bound breaches (0.25 < 0.3), 4 upper-bound breaches (0.25 > 0.2), group 0.75 > 0.6.
    expect(message.match(/lower bound on asset/g)).toHaveLength(4);
    expect(message.match(/upper bound on asset/g)).toHaveLength(4);
    expect(message).toContain("maximum of group 'tech' (index 0): sum 0.75 > 0.6 by 0.15");
  });

  it('says nothing when its weights happen to satisfy the constraints it ignores', () => {
    const r = equalWeight(4, { constraints: constraints(4, 0, 0.3) });
    expect(r.warnings).toHaveLength(0);
  });
});
