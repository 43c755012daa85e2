import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel, RiskModel } from '../../src/linalg/risk-model.js';
import {
  createParametricScratch,
  createResampledRiskModel,
  drawParametricInputs,
  drawParametricMean,
  drawParametricRiskModel,
  prepareParametricBase,
} from '../../src/resample/parametric.js';
import { createDrawStream } from '../../src/resample/streams.js';
import { choleskyPsd } from '../../src/linalg/dense.js';
import { checkPsd } from '../../src/schema/matrix-checks.js';
import { ex3Means, ex3Model, ex4fModel } from '../helpers/reference-data.js';

// Common random numbers for the stress channels (joint, mean-only, covariance-only): the mean
// noise of draw b comes only from stream (seed, b, 'mean') and the covariance noise only from
// (seed, b, 'cov'). The distributional checks are in test/reference/wishart.test.ts.

// EX3 covariance and means (REFERENCES.md).
const dense: DenseRiskModel = ex3Model();
const MU = ex3Means();
// EX4F factor model (REFERENCES.md "Factor form").
const factor: FactorRiskModel = ex4fModel();

function riskValues(model: RiskModel): number[] {
  return model.kind === 'dense' ? Array.from(model.cov) : [...model.factorCov, ...model.specificVar];
}

describe('drawParametricInputs — common random numbers', () => {
  for (const [label, risk, mean] of [
    ['dense', dense, MU],
    ['factor', factor, Float64Array.from([0.06, 0.05, 0.07, 0.04])],
  ] as const) {
    it(`${label}: the mean draw is the same with or without the covariance draw, and vice versa`, () => {
      const base = prepareParametricBase({ mean, risk, observations: 36 });
      const scratch = createParametricScratch(base);
      const jointMean = new Float64Array(base.n);
      const jointRisk = createResampledRiskModel(base);
      const meanOnly = new Float64Array(base.n);
      const covOnly = createResampledRiskModel(base);
      for (let b = 0; b < 5; b++) {
        drawParametricInputs('crn', b, base, jointMean, jointRisk, scratch);
        drawParametricInputs('crn', b, base, meanOnly, null, scratch);
        drawParametricInputs('crn', b, base, null, covOnly, scratch);
        expect(Array.from(meanOnly)).toEqual(Array.from(jointMean));
        expect(riskValues(covOnly)).toEqual(riskValues(jointRisk));
        // The same numbers as drawing from the named sub-streams directly.
        const direct = drawParametricMean(createDrawStream('crn', b, 'mean'), base, new Float64Array(base.n), scratch);
        expect(Array.from(direct)).toEqual(Array.from(jointMean));
        const directRisk = drawParametricRiskModel(createDrawStream('crn', b, 'cov'), base, createResampledRiskModel(base), scratch);
        expect(riskValues(directRisk)).toEqual(riskValues(jointRisk));
      }
    });
  }

  it('a draw does not depend on the draws made before it', () => {
    const base = prepareParametricBase({ mean: MU, risk: dense, observations: 60 });
    const scratch = createParametricScratch(base);
    const inOrder: number[][] = [];
    for (let b = 0; b < 6; b++) {
      const m = new Float64Array(3);
      const r = createResampledRiskModel(base);
      drawParametricInputs(11, b, base, m, r, scratch);
      inOrder.push([...m, ...riskValues(r)]);
    }
    for (const b of [5, 2, 0, 4, 1, 3]) {
      const m = new Float64Array(3);
      const r = createResampledRiskModel(base);
      drawParametricInputs(11, b, base, m, r, scratch);
      expect([...m, ...riskValues(r)]).toEqual(inOrder[b]);
    }
    expect(inOrder[0]).not.toEqual(inOrder[1]);
  });
});

describe('prepareParametricBase and draws: shapes and guards', () => {
  it('Σ_b is symmetric PSD-shaped and positive on the diagonal; the base is untouched', () => {
    const before = Array.from(dense.cov);
    const base = prepareParametricBase({ mean: MU, risk: dense, observations: 12 });
    const target = createResampledRiskModel(base);
    drawParametricRiskModel(createDrawStream('s', 0, 'cov'), base, target, createParametricScratch(base));
    if (target.kind !== 'dense') throw new Error('dense expected');
    for (let i = 0; i < 3; i++) {
      expect(target.cov[i * 3 + i]).toBeGreaterThan(0);
      for (let j = 0; j < 3; j++) expect(target.cov[i * 3 + j]).toBe(target.cov[j * 3 + i]);
    }
    expect(Array.from(dense.cov)).toEqual(before);
  });

  it('T ≤ N (singular Wishart, T − 1 < N) still draws, with rank T − 1', () => {
    const n = 5;
    const cov = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) cov[i * n + j] = i === j ? 1 : 0.3;
    const base = prepareParametricBase({ mean: new Float64Array(n), risk: { kind: 'dense', n, cov }, observations: 3 });
    const target = createResampledRiskModel(base);
    drawParametricRiskModel(createDrawStream('sing', 0, 'cov'), base, target, createParametricScratch(base));
    if (target.kind !== 'dense') throw new Error('dense expected');
    // Rank 2: every 3×3 principal minor vanishes.
    const c = target.cov;
    const minor =
      c[0] * (c[6] * c[12] - c[7] * c[11]) - c[1] * (c[5] * c[12] - c[7] * c[10]) + c[2] * (c[5] * c[11] - c[6] * c[10]);
    expect(Math.abs(minor)).toBeLessThan(1e-14);
    expect(c[0]).toBeGreaterThan(0);
  });

  it('rejects T < 2, mismatched lengths, a non-PSD covariance and a wrong target', () => {
    expect(() => prepareParametricBase({ mean: MU, risk: dense, observations: 1 })).toThrow(RangeError);
    expect(() => prepareParametricBase({ mean: MU, risk: dense, observations: 10.5 })).toThrow(RangeError);
    expect(() => prepareParametricBase({ mean: new Float64Array(2), risk: dense, observations: 10 })).toThrow(RangeError);
    expect(() =>
      prepareParametricBase({ mean: MU, risk: dense, observations: 10, meanStdErr: new Float64Array(2) }),
    ).toThrow(RangeError);
    const bad: DenseRiskModel = { kind: 'dense', n: 2, cov: Float64Array.from([1, 2, 2, 1]) };
    expect(() => prepareParametricBase({ mean: new Float64Array(2), risk: bad, observations: 10 })).toThrow(RangeError);
    const base = prepareParametricBase({ mean: MU, risk: dense, observations: 10 });
    const wrong = createResampledRiskModel(prepareParametricBase({ mean: new Float64Array(4), risk: factor, observations: 10 }));
    expect(() => drawParametricRiskModel(createDrawStream('w', 0), base, wrong, createParametricScratch(base))).toThrow(RangeError);
  });

  it('views: the mean noise uses stdErr only (zero stdErr → exactly the view)', () => {
    const base = prepareParametricBase({ mean: MU, risk: dense, observations: 10, meanStdErr: new Float64Array(3) });
    const out = drawParametricMean(createDrawStream('v', 0, 'mean'), base, new Float64Array(3), createParametricScratch(base));
    expect(Array.from(out)).toEqual(Array.from(MU));
  });
});

describe('prepareParametricBase on a covariance that validation accepts as PSD', () => {
  it('factors a singular Σ with tiny negative eigenvalues (within validation’s tolerance) instead of refusing it', () => {
    // Σ = B Bᵀ − 1e-12·I, B 12×3 (rank 3): nine eigenvalues of −1e-12, which validation accepts
    // (λ_min ≥ −1e-10·max(1, λ₁), matrix-checks.ts) but which are far below Cholesky's round-off
    // floor 64·n·ε·max Σ_ii (≈ 2e-13 here), so the former factorisation threw.
    const n = 12;
    const b = Float64Array.from({ length: n * 3 }, (_, k) => 0.1 * Math.sin(1.7 * k + 0.3));
    const cov = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        let s = 0;
        for (let f = 0; f < 3; f++) s += b[i * 3 + f] * b[j * 3 + f];
        cov[i * n + j] = s - (i === j ? 1e-12 : 0);
      }
    }
    const rows = Array.from({ length: n }, (_, i) => Array.from(cov.subarray(i * n, (i + 1) * n)));
    expect(checkPsd(rows).psd).toBe(true);
    expect(() => choleskyPsd(cov, n)).toThrow(/not positive semi-definite/);
    const base = prepareParametricBase({ mean: new Float64Array(n), risk: { kind: 'dense', n, cov }, observations: 6 });
    if (base.kind !== 'dense') throw new Error('dense expected');
    // L Lᵀ reproduces Σ to within the clipped 1e-12 directions.
    let worst = 0;
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        let s = 0;
        for (let k = 0; k < n; k++) s += base.covLower[i * n + k] * base.covLower[j * n + k];
        worst = Math.max(worst, Math.abs(s - cov[i * n + j]));
      }
    }
    expect(worst).toBeLessThan(1e-11);
    // A clearly indefinite matrix is still refused.
    const bad = Float64Array.from(cov);
    bad[0] -= 1e-3;
    expect(() => prepareParametricBase({ mean: new Float64Array(n), risk: { kind: 'dense', n, cov: bad }, observations: 6 })).toThrow(RangeError);
  });
});
