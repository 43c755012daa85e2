import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';

/**
 * Inputs of the published check values in the project's shared REFERENCES.md, built in one place so every
 * test uses the same numbers. Each builder returns fresh buffers: a test may overwrite them.
 * Tests still name the source of each expected value beside the check.
 */

/**
 * Park–Miller minimal standard LCG as REFERENCES.md states it: s ← (16807·s) mod 2147483647,
 * u = s/2147483647, the first value after one step; u ∈ (0, 1). The product stays below 2^53,
 * so plain doubles reproduce it exactly (and so match the Python generators of the fixtures).
 */
export function parkMiller(seed: number): () => number {
  let s = seed;
  return () => {
    s = (16807 * s) % 2147483647;
    return s / 2147483647;
  };
}

/** The first `count` values of parkMiller(seed). */
export function parkMillerUniforms(seed: number, count: number): number[] {
  const next = parkMiller(seed);
  return Array.from({ length: count }, () => next());
}

/** AR(1) path x_0 = e_0, x_t = φ x_{t−1} + e_t with e_t = u_t − ½ from parkMiller(seed) (the block-length fixtures' generator). */
export function ar1Path(seed: number, n: number, phi: number): number[] {
  const e = parkMillerUniforms(seed, n).map((u) => u - 0.5);
  const x = [e[0]];
  for (let t = 1; t < n; t++) x.push(phi * x[t - 1] + e[t]);
  return x;
}

/** Row-major covariance Σ_ij = σ_i σ_j ρ_ij. */
export function covarianceFromVolsAndCorrelation(vols: readonly number[], corr: readonly (readonly number[])[]): Float64Array {
  const n = vols.length;
  const cov = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) cov[i * n + j] = vols[i] * vols[j] * corr[i][j];
  return cov;
}

/** Dense risk model with Σ_ij = σ_i σ_j ρ_ij. */
export function denseFromVolsAndCorrelation(vols: readonly number[], corr: readonly (readonly number[])[]): DenseRiskModel {
  return { kind: 'dense', n: vols.length, cov: covarianceFromVolsAndCorrelation(vols, corr) };
}

/** Constant-correlation matrix: 1 on the diagonal, ρ elsewhere. */
export function constantCorrelation(n: number, rho: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : rho)));
}

/** Maillard, Roncalli & Teïletche (2010) worked examples (REFERENCES.md "Risk parity"): σ = (10, 20, 30, 40) %. */
export const MRT_VOLS: readonly number[] = [0.1, 0.2, 0.3, 0.4];
/** Their block correlation [[1,.8,0,0],[.8,1,0,0],[0,0,1,−.5],[0,0,−.5,1]] (REFERENCES.md). */
export const MRT_BLOCK_CORRELATION: readonly (readonly number[])[] = [
  [1, 0.8, 0, 0],
  [0.8, 1, 0, 0],
  [0, 0, 1, -0.5],
  [0, 0, -0.5, 1],
];

/** EX3 (REFERENCES.md "Markowitz closed forms"; also the Kelly example): σ = (0.15, 0.20, 0.25). */
export const EX3_VOLS: readonly number[] = [0.15, 0.2, 0.25];
/** EX3 correlation [[1,.3,.2],[.3,1,.4],[.2,.4,1]] (REFERENCES.md). */
export const EX3_CORRELATION: readonly (readonly number[])[] = [
  [1, 0.3, 0.2],
  [0.3, 1, 0.4],
  [0.2, 0.4, 1],
];
/** EX3 means μ = (0.08, 0.10, 0.12) (REFERENCES.md). */
export const EX3_MEANS: readonly number[] = [0.08, 0.1, 0.12];

/** EX3 covariance, 3×3 row-major (fresh buffer). */
export function ex3Covariance(): Float64Array {
  return covarianceFromVolsAndCorrelation(EX3_VOLS, EX3_CORRELATION);
}

/** EX3 covariance as nested rows, the shape of a proposal's `inputs.covariance`. */
export function ex3CovarianceRows(): number[][] {
  const cov = ex3Covariance();
  return EX3_VOLS.map((_, i) => Array.from(cov.subarray(3 * i, 3 * i + 3)));
}

/** EX3 as a dense risk model (fresh buffer). */
export function ex3Model(): DenseRiskModel {
  return denseFromVolsAndCorrelation(EX3_VOLS, EX3_CORRELATION);
}

/** EX3 means as a Float64Array (fresh buffer). */
export function ex3Means(): Float64Array {
  return Float64Array.from(EX3_MEANS);
}

/**
 * EX4F (REFERENCES.md "Factor form"): B = [[1,.2],[.9,−.3],[1.1,.5],[.8,0]],
 * F = [[.04,.002],[.002,.01]], D = diag(.01,.02,.015,.03) (fresh buffers).
 */
export function ex4fModel(): FactorRiskModel {
  return {
    kind: 'factor',
    n: 4,
    k: 2,
    factorNames: ['f1', 'f2'],
    loadings: Float64Array.from([1, 0.2, 0.9, -0.3, 1.1, 0.5, 0.8, 0]),
    factorCov: Float64Array.from([0.04, 0.002, 0.002, 0.01]),
    specificVar: Float64Array.from([0.01, 0.02, 0.015, 0.03]),
  };
}

/** EX4F means μ = (.06, .05, .07, .04) (REFERENCES.md). */
export function ex4fMeans(): Float64Array {
  return Float64Array.from([0.06, 0.05, 0.07, 0.04]);
}
