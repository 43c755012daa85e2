import { describe, expect, it } from 'vitest';
import { crraUtility, expectedUtility, kelly } from '../../src/optimize/kelly.js';
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
