import type { RandomStream } from './streams.js';

/**
 * Multivariate normal draws written into caller buffers. The covariance enters through a
 * factor computed once per request, so a draw costs O(N²) (dense) or O(N·K) (factor model)
 * and allocates nothing.
 */

/**
 * out ← μ + scale · L z, z ~ N(0, I_n): a draw from N(μ, scale² · L Lᵀ).
 * `lower` is an n×n row-major lower-triangular factor (only its lower triangle is read);
 * `z` is scratch of length ≥ n. Consumes n normals from the stream, in index order.
 * For the sample mean of T observations, N(μ, Σ/T), pass scale = 1/√T.
 */
export function drawCorrelatedNormal(
  stream: RandomStream,
  mean: Float64Array,
  lower: Float64Array,
  n: number,
  scale: number,
  out: Float64Array,
  z: Float64Array,
): Float64Array {
  for (let i = 0; i < n; i++) z[i] = stream.normal();
  for (let i = 0; i < n; i++) {
    const row = i * n;
    let s = 0;
    for (let k = 0; k <= i; k++) s += lower[row + k] * z[k];
    out[i] = mean[i] + scale * s;
  }
  return out;
}

/**
 * out ← μ + scale · (B L_F z_f + √D ∘ z_s), z_f ~ N(0, I_k), z_s ~ N(0, I_n): a draw from
 * N(μ, scale² · (B F Bᵀ + D)) with F = L_F L_Fᵀ, never forming the N×N covariance.
 * `loadings` is B (n×k row-major), `factorLower` is L_F (k×k lower), `specificVar` is diag(D).
 * `zFactor` and `factorShock` are scratch of length ≥ k. Consumes k factor normals, then n
 * specific normals.
 */
export function drawFactorNormal(
  stream: RandomStream,
  mean: Float64Array,
  loadings: Float64Array,
  factorLower: Float64Array,
  specificVar: Float64Array,
  n: number,
  k: number,
  scale: number,
  out: Float64Array,
  zFactor: Float64Array,
  factorShock: Float64Array,
): Float64Array {
  for (let a = 0; a < k; a++) zFactor[a] = stream.normal();
  for (let a = 0; a < k; a++) {
    let s = 0;
    for (let b = 0; b <= a; b++) s += factorLower[a * k + b] * zFactor[b];
    factorShock[a] = s;
  }
  for (let i = 0; i < n; i++) {
    const row = i * k;
    let s = Math.sqrt(specificVar[i]) * stream.normal();
    for (let a = 0; a < k; a++) s += loadings[row + a] * factorShock[a];
    out[i] = mean[i] + scale * s;
  }
  return out;
}

/**
 * out_i ← μ_i + stdErr_i · z_i, z_i ~ N(0, 1) independent: the noise of views given with their
 * own standard errors. Consumes n normals, in index order.
 */
export function drawIndependentNormal(
  stream: RandomStream,
  mean: Float64Array,
  stdErr: Float64Array,
  out: Float64Array,
): Float64Array {
  for (let i = 0; i < mean.length; i++) out[i] = mean[i] + stdErr[i] * stream.normal();
  return out;
}
