import { describe, expect, it } from 'vitest';
import { choleskyPsd } from '../../src/linalg/dense.js';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import {
  createParametricScratch,
  createResampledRiskModel,
  drawParametricMean,
  drawParametricRiskModel,
  prepareParametricBase,
} from '../../src/resample/parametric.js';
import { createDrawStream } from '../../src/resample/streams.js';
import { drawScaledChiSquare, drawWishart } from '../../src/resample/wishart.js';
import { ex3Covariance, ex3Means, ex4fMeans, ex4fModel } from '../helpers/reference-data.js';

// Wishart moments (REFERENCES.md, "Sampling"; Anderson 2003, An Introduction to Multivariate
// Statistical Analysis, ch. 7, from memory): for W ~ Wishart(n, V), E[W] = nV,
// Var(W_ij) = n(V_ij² + V_ii V_jj), E[det W] = det V · n(n−1)…(n−p+1).
// Monte Carlo tolerance: 5 standard errors of the Monte Carlo estimate, the standard error being
// exact where the variance is known in closed form (means) and the delta-method estimate
// √((m̂4 − ŝ⁴)/B) for sample variances. With fixed seeds the outcome is reproducible; the 5-SE
// bound keeps the chance that a correct sampler fails at about 6e-7 per check.

const Z = 5;

// EX3 (REFERENCES.md): σ = (0.15, 0.20, 0.25), correlation [[1,.3,.2],[.3,1,.4],[.2,.4,1]].
const P = 3;
const V = ex3Covariance();

function det3(m: Float64Array): number {
  return (
    m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6])
  );
}

/** Running first, second and fourth central moments of several series at once. */
class Moments {
  private readonly values: Float64Array[];
  constructor(
    private readonly width: number,
    private readonly count: number,
  ) {
    this.values = Array.from({ length: width }, () => new Float64Array(count));
  }
  record(row: number, sample: ArrayLike<number>): void {
    for (let j = 0; j < this.width; j++) this.values[j][row] = sample[j];
  }
  mean(j: number): number {
    let s = 0;
    for (const v of this.values[j]) s += v;
    return s / this.count;
  }
  /** Unbiased sample variance and its delta-method standard error. */
  variance(j: number): { value: number; standardError: number } {
    const m = this.mean(j);
    let m2 = 0;
    let m4 = 0;
    for (const v of this.values[j]) {
      const d = (v - m) ** 2;
      m2 += d;
      m4 += d * d;
    }
    m2 /= this.count;
    m4 /= this.count;
    return { value: (m2 * this.count) / (this.count - 1), standardError: Math.sqrt((m4 - m2 * m2) / this.count) };
  }
  /** Covariance of series a and b, and its standard error √(Var((a−ā)(b−b̄))/B). */
  covariance(a: number, b: number): { value: number; standardError: number } {
    const ma = this.mean(a);
    const mb = this.mean(b);
    let c = 0;
    let c2 = 0;
    for (let r = 0; r < this.count; r++) {
      const prod = (this.values[a][r] - ma) * (this.values[b][r] - mb);
      c += prod;
      c2 += prod * prod;
    }
    c /= this.count;
    c2 /= this.count;
    return { value: (c * this.count) / (this.count - 1), standardError: Math.sqrt((c2 - c * c) / this.count) };
  }
}

function checkWishartMoments(df: number, draws: number, seed: string): void {
  const lower = choleskyPsd(V, P);
  const w = new Float64Array(P * P);
  const scratch = new Float64Array(P * P);
  const moments = new Moments(P * P + 1, draws);
  const row = new Float64Array(P * P + 1);
  for (let b = 0; b < draws; b++) {
    drawWishart(createDrawStream(seed, b, 'cov'), lower, P, df, 1, w, scratch);
    row.set(w);
    row[P * P] = det3(w);
    moments.record(b, row);
  }
  for (let i = 0; i < P; i++) {
    for (let j = 0; j < P; j++) {
      const k = i * P + j;
      const exactVariance = df * (V[k] ** 2 + V[i * P + i] * V[j * P + j]);
      // E[W] = nV, standard error exact: √(Var(W_ij)/B).
      expect(Math.abs(moments.mean(k) - df * V[k])).toBeLessThan(Z * Math.sqrt(exactVariance / draws));
      // Var(W_ij) = n(V_ij² + V_ii V_jj).
      const v = moments.variance(k);
      expect(Math.abs(v.value - exactVariance)).toBeLessThan(Z * v.standardError);
    }
  }
  let expectedDet = det3(V);
  for (let k = 0; k < P; k++) expectedDet *= df - k;
  const detVariance = moments.variance(P * P);
  expect(Math.abs(moments.mean(P * P) - expectedDet)).toBeLessThan(Z * Math.sqrt(detVariance.value / draws) + 1e-18);
}

describe('Wishart draws (Bartlett decomposition) match the published moments', () => {
  it('n = 7, p = 3 (EX3 covariance): E[W], Var(W_ij), E[det W] within 5 SE, 20 000 draws', () => {
    checkWishartMoments(7, 20_000, 'wishart-7');
  });

  it('non-integer n = 4.5 (Bartlett with χ² of non-integer df)', () => {
    checkWishartMoments(4.5, 20_000, 'wishart-4.5');
  });

  it('singular n = 2 < p = 3 (sum of outer products): moments hold and det W = 0', () => {
    checkWishartMoments(2, 20_000, 'wishart-2');
    const w = new Float64Array(P * P);
    drawWishart(createDrawStream('rank', 0), choleskyPsd(V, P), P, 2, 1, w, new Float64Array(P * P));
    expect(Math.abs(det3(w))).toBeLessThan(1e-15); // rank 2: determinant zero up to round-off
  });

  it('symmetric output, and n ≤ p − 1 must be an integer', () => {
    const w = new Float64Array(P * P);
    drawWishart(createDrawStream('sym', 0), choleskyPsd(V, P), P, 5, 1, w, new Float64Array(P * P));
    for (let i = 0; i < P; i++) for (let j = 0; j < P; j++) expect(w[i * P + j]).toBe(w[j * P + i]);
    expect(() => drawWishart(createDrawStream('x', 0), choleskyPsd(V, P), P, 1.5, 1, w, new Float64Array(P * P))).toThrow(RangeError);
  });
});

describe('parametric scheme: Σ_b ~ Wishart(T−1, Σ/(T−1)) and μ_b ~ N(μ, Σ/T)', () => {
  const T = 24;
  const mu = ex3Means(); // EX3 μ (REFERENCES.md)
  const dense: DenseRiskModel = { kind: 'dense', n: P, cov: V };

  it('E[Σ_b] = Σ and Var(Σ_b,ij) = (Σ_ij² + Σ_ii Σ_jj)/(T−1), within 5 SE', () => {
    const base = prepareParametricBase({ mean: mu, risk: dense, observations: T });
    const scratch = createParametricScratch(base);
    const target = createResampledRiskModel(base);
    const draws = 20_000;
    const moments = new Moments(P * P, draws);
    for (let b = 0; b < draws; b++) {
      const model = drawParametricRiskModel(createDrawStream('sigma', b, 'cov'), base, target, scratch);
      if (model.kind !== 'dense') throw new Error('expected dense');
      moments.record(b, model.cov);
    }
    for (let i = 0; i < P; i++) {
      for (let j = 0; j < P; j++) {
        const k = i * P + j;
        const exactVariance = (V[k] ** 2 + V[i * P + i] * V[j * P + j]) / (T - 1);
        expect(Math.abs(moments.mean(k) - V[k])).toBeLessThan(Z * Math.sqrt(exactVariance / draws));
        const v = moments.variance(k);
        expect(Math.abs(v.value - exactVariance)).toBeLessThan(Z * v.standardError);
      }
    }
  });

  it('μ_b has mean μ and covariance Σ/T (Isserlis: Var((X_i−μ_i)(X_j−μ_j)) = (Σ_ij² + Σ_iiΣ_jj)/T²)', () => {
    const base = prepareParametricBase({ mean: mu, risk: dense, observations: T });
    checkNormalDraws(base, mu, V, T, 'mu-dense');
  });

  it('factor model (EX4F): μ_b ~ N(μ, (BFBᵀ + D)/T) without forming N×N', () => {
    // EX4F (REFERENCES.md): B = [[1,.2],[.9,−.3],[1.1,.5],[.8,0]], F = [[.04,.002],[.002,.01]], D = diag(.01,.02,.015,.03).
    const factor = ex4fModel();
    const mean4 = ex4fMeans(); // EX4F μ (REFERENCES.md)
    const base = prepareParametricBase({ mean: mean4, risk: factor, observations: T });
    checkNormalDraws(base, mean4, toDenseCovariance(factor), T, 'mu-factor');
  });

  it('factor model: E[F_b] = F, Var(F_b,ij) = (F_ij² + F_iiF_jj)/(T−1); E[D_b,i] = D_i, Var = 2D_i²/(T−1)', () => {
    const factor = ex4fModel();
    const base = prepareParametricBase({ mean: new Float64Array(4), risk: factor, observations: T });
    const scratch = createParametricScratch(base);
    const target = createResampledRiskModel(base);
    const draws = 20_000;
    const moments = new Moments(4 + 4, draws);
    const row = new Float64Array(8);
    for (let b = 0; b < draws; b++) {
      const model = drawParametricRiskModel(createDrawStream('factor', b, 'cov'), base, target, scratch);
      if (model.kind !== 'factor') throw new Error('expected factor');
      expect(model.loadings).toBe(factor.loadings); // B is not resampled
      row.set(model.factorCov, 0);
      row.set(model.specificVar, 4);
      moments.record(b, row);
    }
    const F = factor.factorCov;
    for (let i = 0; i < 2; i++) {
      for (let j = 0; j < 2; j++) {
        const k = i * 2 + j;
        const exactVariance = (F[k] ** 2 + F[i * 2 + i] * F[j * 2 + j]) / (T - 1);
        expect(Math.abs(moments.mean(k) - F[k])).toBeLessThan(Z * Math.sqrt(exactVariance / draws));
        const v = moments.variance(k);
        expect(Math.abs(v.value - exactVariance)).toBeLessThan(Z * v.standardError);
      }
    }
    for (let i = 0; i < 4; i++) {
      const d = factor.specificVar[i];
      const exactVariance = (2 * d * d) / (T - 1); // Var(χ²_ν/ν) = 2/ν
      expect(Math.abs(moments.mean(4 + i) - d)).toBeLessThan(Z * Math.sqrt(exactVariance / draws));
      const v = moments.variance(4 + i);
      expect(Math.abs(v.value - exactVariance)).toBeLessThan(Z * v.standardError);
    }
  });

  it('views: μ_b ~ N(μ_view, diag(stdErr²))', () => {
    const stdErr = Float64Array.from([0.01, 0.02, 0.005]);
    const base = prepareParametricBase({ mean: mu, risk: dense, observations: T, meanStdErr: stdErr });
    const diagonal = new Float64Array(P * P);
    for (let i = 0; i < P; i++) diagonal[i * P + i] = stdErr[i] ** 2;
    checkNormalDraws(base, mu, diagonal, 1, 'views');
  });

  it('scaled chi-square D·χ²_ν/ν at ν = 1 (heavy skew): mean D, variance 2D²', () => {
    const d = Float64Array.from([0.3]);
    const out = new Float64Array(1);
    const draws = 100_000;
    const moments = new Moments(1, draws);
    const stream = createDrawStream('chi1', 0);
    for (let b = 0; b < draws; b++) moments.record(b, drawScaledChiSquare(stream, d, 1, out));
    expect(Math.abs(moments.mean(0) - 0.3)).toBeLessThan(Z * Math.sqrt((2 * 0.09) / draws));
    const v = moments.variance(0);
    expect(Math.abs(v.value - 2 * 0.09)).toBeLessThan(Z * v.standardError);
  });
});

/** μ_b's mean within 5 exact SE of μ; its covariance within 5 SE of cov/T. */
function checkNormalDraws(
  base: ReturnType<typeof prepareParametricBase>,
  mu: Float64Array,
  cov: Float64Array,
  T: number,
  seed: string,
): void {
  const n = mu.length;
  const scratch = createParametricScratch(base);
  const out = new Float64Array(n);
  const draws = 40_000;
  const moments = new Moments(n, draws);
  for (let b = 0; b < draws; b++) moments.record(b, drawParametricMean(createDrawStream(seed, b, 'mean'), base, out, scratch));
  for (let i = 0; i < n; i++) {
    expect(Math.abs(moments.mean(i) - mu[i])).toBeLessThan(Z * Math.sqrt(cov[i * n + i] / T / draws));
    for (let j = 0; j <= i; j++) {
      const c = moments.covariance(i, j);
      const exactSe = Math.sqrt((cov[i * n + j] ** 2 + cov[i * n + i] * cov[j * n + j]) / (T * T) / draws);
      expect(Math.abs(c.value - cov[i * n + j] / T)).toBeLessThan(Z * exactSe);
    }
  }
}
