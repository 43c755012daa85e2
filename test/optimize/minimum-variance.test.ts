import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { meanVariance } from '../../src/optimize/mean-variance.js';
import { minimumVariance } from '../../src/optimize/minimum-variance.js';
import type { ConstraintSet } from '../../src/optimize/types.js';

const model: DenseRiskModel = {
  kind: 'dense',
  n: 3,
  cov: Float64Array.from([0.04, 0.006, 0.002, 0.006, 0.09, 0.01, 0.002, 0.01, 0.16]),
};
const cs: ConstraintSet = { n: 3, lower: new Float64Array(3), upper: new Float64Array(3).fill(Infinity), budget: 1, groups: [] };

function variance(w: Float64Array): number {
  let v = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) v += w[i] * model.cov[i * 3 + j] * w[j];
  return v;
}

describe('minimumVariance', () => {
  it('equals mean-variance with μ = 0 and has the lowest variance of nearby feasible points', () => {
    const mv = minimumVariance(model, cs);
    const zeroMean = meanVariance(model, new Float64Array(3), cs, 1);
    for (let i = 0; i < 3; i++) expect(mv.weights[i]).toBeCloseTo(zeroMean.weights[i], 13);
    const v0 = variance(mv.weights);
    // Any budget-preserving move that stays long-only raises the variance.
    for (const [a, b] of [
      [0, 1],
      [1, 2],
      [0, 2],
    ]) {
      for (const step of [1e-3, -1e-3]) {
        const w = Float64Array.from(mv.weights);
        w[a] += step;
        w[b] -= step;
        if (w[a] < 0 || w[b] < 0) continue;
        expect(variance(w)).toBeGreaterThan(v0);
      }
    }
  });

  it('ignores the scale of the covariance', () => {
    const scaled: DenseRiskModel = { ...model, cov: model.cov.map((v) => 250 * v) };
    const a = minimumVariance(model, cs).weights;
    const b = minimumVariance(scaled, cs).weights;
    for (let i = 0; i < 3; i++) expect(a[i]).toBeCloseTo(b[i], 13);
  });
});
