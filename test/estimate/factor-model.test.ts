import { Matrix, solve } from 'ml-matrix';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { sampleCovariance } from '../../src/estimate/covariance.js';
import { EstimationError } from '../../src/estimate/errors.js';
import { pcaFactorModel, regressionFactorModel } from '../../src/estimate/factor-model.js';
import { createReturnHistory, returnHistoryFromRows, type ReturnHistory } from '../../src/estimate/history.js';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';

const TRUE_LOADINGS = [
  [1.1, 0.3, -0.2],
  [0.7, -0.4, 0.5],
  [0.9, 0.8, 0.1],
  [1.3, 0, -0.6],
];
const TRUE_ALPHA = [0.001, -0.002, 0.0005, 0.003];

/** Factor returns and asset returns α + Bf + noise·ε (noise 0 gives an exact linear model). */
function simulate(seed: string, periods: number, noise: number): { assets: ReturnHistory; factors: ReturnHistory } {
  const rng = seedrandom(seed);
  const k = 3;
  const n = 4;
  const f = new Float64Array(periods * k);
  const r = new Float64Array(periods * n);
  for (let t = 0; t < periods; t++) {
    for (let a = 0; a < k; a++) f[t * k + a] = 0.04 * (rng() - 0.5);
    for (let i = 0; i < n; i++) {
      let v = TRUE_ALPHA[i] + noise * (rng() - 0.5);
      for (let a = 0; a < k; a++) v += TRUE_LOADINGS[i][a] * f[t * k + a];
      r[t * n + i] = v;
    }
  }
  return { assets: createReturnHistory(r, periods, n), factors: createReturnHistory(f, periods, k) };
}

const NAMES = ['market', 'size', 'value'];

describe('regressionFactorModel', () => {
  it('recovers α and B exactly when the returns are an exact linear function of the factors', () => {
    const { assets, factors } = simulate('exact', 30, 0);
    const fit = regressionFactorModel(assets, factors, NAMES);
    for (let i = 0; i < 4; i++) {
      expect(fit.alpha[i]).toBeCloseTo(TRUE_ALPHA[i], 14);
      for (let a = 0; a < 3; a++) expect(fit.model.loadings[i * 3 + a]).toBeCloseTo(TRUE_LOADINGS[i][a], 12);
      expect(fit.model.specificVar[i]).toBeLessThan(1e-30);
      expect(fit.rSquared[i]).toBeCloseTo(1, 14);
    }
    expect(fit.model.factorNames).toEqual(NAMES);
    expect(fit.residualDegreesOfFreedom).toBe(26);
  });

  it('agrees with a least-squares solve of the full design [1, f] (ml-matrix QR), on all and on selected rows', () => {
    const { assets, factors } = simulate('noisy', 48, 0.03);
    const pick = seedrandom('draw');
    const rows = Int32Array.from({ length: 48 }, () => Math.floor(48 * pick())); // a bootstrap-style draw
    const workspace = new EstimationWorkspace();
    for (const selection of [undefined, rows]) {
      const used = selection ? Array.from(selection) : Array.from({ length: 48 }, (_, p) => p);
      const design = new Matrix(used.map((t) => [1, ...factors.values.subarray(t * 3, t * 3 + 3)]));
      const y = new Matrix(used.map((t) => Array.from(assets.values.subarray(t * 4, t * 4 + 4))));
      const coef = solve(design, y); // QR least squares for a tall system
      const residual = y.clone().sub(design.mmul(coef));
      const fit = regressionFactorModel(assets, factors, NAMES, { rows: selection, workspace });
      for (let i = 0; i < 4; i++) {
        expect(fit.alpha[i]).toBeCloseTo(coef.get(0, i), 13);
        for (let a = 0; a < 3; a++) expect(fit.model.loadings[i * 3 + a]).toBeCloseTo(coef.get(a + 1, i), 12);
        let ssr = 0;
        for (let p = 0; p < used.length; p++) ssr += residual.get(p, i) ** 2;
        expect(fit.model.specificVar[i] / (ssr / (used.length - 4))).toBeCloseTo(1, 11);
      }
    }
  });

  it('splits each sample variance into explained and residual parts: S_ii = (BFBᵀ)_ii + SSR_i/(T − 1)', () => {
    // OLS with an intercept: total sum of squares = explained + residual (e.g. Greene, Econometric Analysis, ch. 3, from memory).
    const { assets, factors } = simulate('anova', 40, 0.05);
    const fit = regressionFactorModel(assets, factors, NAMES);
    const sample = sampleCovariance(assets).model.cov;
    const dense = toDenseCovariance(fit.model);
    for (let i = 0; i < 4; i++) {
      const explained = dense[i * 4 + i] - fit.model.specificVar[i];
      const residual = (fit.model.specificVar[i] * fit.residualDegreesOfFreedom) / 39;
      expect((explained + residual) / sample[i * 4 + i]).toBeCloseTo(1, 13);
      expect(fit.rSquared[i]).toBeCloseTo(explained / sample[i * 4 + i], 12);
    }
    const factorSample = sampleCovariance(factors).model.cov;
    expect(Array.from(fit.model.factorCov)).toEqual(Array.from(factorSample));
  });

  it('refuses collinear factors, too few rows and mismatched inputs', () => {
    const { assets, factors } = simulate('bad', 20, 0.01);
    const collinear = createReturnHistory(
      Float64Array.from({ length: 40 }, (_, i) => (i % 2 === 0 ? factors.values[(i >> 1) * 3] : 2 * factors.values[(i >> 1) * 3])),
      20,
      2,
    );
    expect(() => regressionFactorModel(assets, collinear, ['a', 'b'])).toThrow(/collinear/);
    expect(() => regressionFactorModel(assets, factors, NAMES, { rows: Int32Array.from([0, 1, 2, 3]) })).toThrow(EstimationError);
    expect(() => regressionFactorModel(assets, factors, ['only-one'])).toThrow(/factor names/);
    const shorter = createReturnHistory(factors.values.subarray(0, 30), 10, 3);
    expect(() => regressionFactorModel(assets, shorter, NAMES)).toThrow(/rows/);
  });
});

describe('pcaFactorModel', () => {
  it('finds (1, 1)/√2 and (1, −1)/√2 for two assets of equal variance', () => {
    // S = [[0.8, 0.4], [0.4, 0.8]]: eigenvalues 1.2 and 0.4 (2×2 symmetric eigenproblem by hand).
    const history = returnHistoryFromRows([[1, 0], [0, 1], [-1, 0], [0, -1], [1, 1], [-1, -1]]);
    const fit = pcaFactorModel(history, 1);
    expect(fit.eigenvalues[0]).toBeCloseTo(1.2, 14);
    expect(fit.eigenvalues[1]).toBeCloseTo(0.4, 14);
    expect(fit.model.loadings[0]).toBeCloseTo(Math.SQRT1_2, 14);
    expect(fit.model.loadings[1]).toBeCloseTo(Math.SQRT1_2, 14);
    expect(fit.model.factorCov[0]).toBeCloseTo(1.2, 14);
    // D = diag(S) − 1.2·½ = 0.2 each; explained share 1.2/1.6.
    expect(fit.model.specificVar[0]).toBeCloseTo(0.2, 14);
    expect(fit.explainedShare).toBeCloseTo(0.75, 14);
    expect(fit.model.factorNames).toEqual(['pc1']);
  });

  it('leaves the Eckart–Young residual: ‖S − BFBᵀ‖²_F = Σ_{a>k} λ_a², with orthonormal B', () => {
    // Eckart & Young (1936), Psychometrika 1(3): best rank-k approximation by truncated eigen-decomposition.
    const { assets } = simulate('pca', 60, 0.04);
    const sample = sampleCovariance(assets).model.cov;
    for (const k of [1, 2, 3]) {
      const fit = pcaFactorModel(assets, k);
      const { loadings, factorCov } = fit.model;
      for (let a = 0; a < k; a++) {
        for (let b = 0; b < k; b++) {
          let dot = 0;
          for (let i = 0; i < 4; i++) dot += loadings[i * k + a] * loadings[i * k + b];
          expect(dot).toBeCloseTo(a === b ? 1 : 0, 14);
        }
      }
      let residualSq = 0;
      for (let i = 0; i < 4; i++) {
        for (let j = 0; j < 4; j++) {
          let common = 0;
          for (let a = 0; a < k; a++) common += loadings[i * k + a] * factorCov[a * k + a] * loadings[j * k + a];
          residualSq += (sample[i * 4 + j] - common) ** 2;
        }
      }
      let tail = 0;
      for (let a = k; a < 4; a++) tail += fit.eigenvalues[a] ** 2;
      expect(residualSq / tail).toBeCloseTo(1, 10);
    }
  });

  it('with k = N reproduces S and floors the specific variances', () => {
    const { assets } = simulate('full', 25, 0.02);
    const sample = sampleCovariance(assets).model.cov;
    const fit = pcaFactorModel(assets, 4, { specificFloor: 1e-14 });
    const dense = toDenseCovariance(fit.model);
    const scale = Math.max(...sample.map(Math.abs));
    for (let i = 0; i < 4; i++) {
      for (let j = 0; j < 4; j++) {
        const expected = sample[i * 4 + j] + (i === j ? 1e-14 : 0);
        expect(Math.abs(dense[i * 4 + j] - expected) / scale).toBeLessThan(1e-12);
      }
    }
    for (let i = 0; i < 4; i++) expect(fit.model.specificVar[i]).toBe(1e-14);
    let trace = 0;
    for (let i = 0; i < 4; i++) trace += sample[i * 5];
    const sum = fit.eigenvalues.reduce((s, v) => s + v, 0);
    expect(sum / trace).toBeCloseTo(1, 14);
    expect(fit.explainedShare).toBeCloseTo(1, 14);
  });

  it('refuses a component count outside 1..N', () => {
    const { assets } = simulate('count', 10, 0.01);
    expect(() => pcaFactorModel(assets, 0)).toThrow(EstimationError);
    expect(() => pcaFactorModel(assets, 5)).toThrow(EstimationError);
    expect(() => pcaFactorModel(assets, 1.5)).toThrow(EstimationError);
  });
});
