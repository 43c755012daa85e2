import type { RandomStream } from './streams.js';

/**
 * Wishart and scaled chi-square draws for covariance noise, written into caller buffers.
 *
 * If rows x_1..x_T are iid N(μ, Σ), then (T−1)S ~ Wishart(T−1, Σ) (Anderson, An Introduction to
 * Multivariate Statistical Analysis, 3rd ed. 2003, ch. 7, from memory), so a resampled sample
 * covariance is S_b ~ Wishart(T−1, Σ/(T−1)), with E[S_b] = Σ.
 */

/**
 * out ← factor · L A Aᵀ Lᵀ, a draw from Wishart(df, factor · L Lᵀ) (p×p, row-major, full
 * symmetric matrix written).
 *
 * df > p − 1: Bartlett decomposition (Bartlett 1933; Anderson 2003, ch. 7, from memory): A lower triangular
 * with A_ii² ~ χ²(df − i + 1) (1-based i) and A_ij ~ N(0, 1) below the diagonal, all independent.
 * Stream order: row by row, for row i first the off-diagonal normals A_i1..A_i,i−1, then A_ii.
 *
 * df ≤ p − 1 (singular Wishart; df must then be a positive integer): W = Σ_{r=1}^{df} y_r y_rᵀ with
 * y_r = L z_r, z_r ~ N(0, I_p), the definition itself.
 *
 * `lower` is an L with L Lᵀ = V (lower triangle read); `scratch` holds ≥ p² values. O(p³) for
 * Bartlett, O(df·p²) for the singular case; no allocation.
 */
export function drawWishart(
  stream: RandomStream,
  lower: Float64Array,
  p: number,
  df: number,
  factor: number,
  out: Float64Array,
  scratch: Float64Array,
): Float64Array {
  if (scratch.length < p * p || out.length < p * p) throw new RangeError(`drawWishart: buffers must hold ${p * p} values`);
  if (df > p - 1) return bartlett(stream, lower, p, df, factor, out, scratch);
  if (!Number.isInteger(df) || df < 1) {
    throw new RangeError(`Wishart df must exceed p − 1 = ${p - 1} or be a positive integer, got ${df}`);
  }
  return sumOfOuterProducts(stream, lower, p, df, factor, out, scratch);
}

function bartlett(
  stream: RandomStream,
  lower: Float64Array,
  p: number,
  df: number,
  factor: number,
  out: Float64Array,
  a: Float64Array,
): Float64Array {
  // A (lower triangular) in `a`. 0-based row i has diagonal A_ii² ~ χ²(df − i).
  for (let i = 0; i < p; i++) {
    const row = i * p;
    for (let j = 0; j < i; j++) a[row + j] = stream.normal();
    a[row + i] = Math.sqrt(stream.chiSquare(df - i));
    for (let j = i + 1; j < p; j++) a[row + j] = 0;
  }
  // M = L A in place (lower triangular): M_ij = Σ_{k=j}^{i} L_ik A_kj reads column j of A at
  // rows j..i only. Filling column j from the bottom row up, every A_kj it reads (k ≤ i) is
  // still unmodified, so one p×p buffer suffices.
  for (let j = 0; j < p; j++) {
    for (let i = p - 1; i >= j; i--) {
      const row = i * p;
      let s = 0;
      for (let k = j; k <= i; k++) s += lower[row + k] * a[k * p + j];
      a[row + j] = s;
    }
  }
  // W = factor · M Mᵀ: W_ij = Σ_{k ≤ min(i,j)} M_ik M_jk.
  for (let i = 0; i < p; i++) {
    const rowI = i * p;
    for (let j = 0; j <= i; j++) {
      const rowJ = j * p;
      let s = 0;
      for (let k = 0; k <= j; k++) s += a[rowI + k] * a[rowJ + k];
      const w = factor * s;
      out[rowI + j] = w;
      out[rowJ + i] = w;
    }
  }
  return out;
}

function sumOfOuterProducts(
  stream: RandomStream,
  lower: Float64Array,
  p: number,
  df: number,
  factor: number,
  out: Float64Array,
  scratch: Float64Array,
): Float64Array {
  // scratch[0..p) = z, scratch[p..2p) = y = L z; p ≥ 2 here (df ≥ 1 > p − 1 otherwise), so 2p ≤ p².
  out.fill(0, 0, p * p);
  for (let r = 0; r < df; r++) {
    for (let i = 0; i < p; i++) scratch[i] = stream.normal();
    for (let i = 0; i < p; i++) {
      let s = 0;
      for (let k = 0; k <= i; k++) s += lower[i * p + k] * scratch[k];
      scratch[p + i] = s;
    }
    for (let i = 0; i < p; i++) {
      const yi = factor * scratch[p + i];
      for (let j = 0; j <= i; j++) out[i * p + j] += yi * scratch[p + j];
    }
  }
  for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) out[j * p + i] = out[i * p + j];
  return out;
}

/**
 * out_i ← variances_i · χ²_df / df, independent across i: the sampling law of a residual
 * variance estimated from df degrees of freedom under normality (E = variances_i).
 * Used for specific variances D_b,i ~ D_i·χ²_{T−1}/(T−1). Consumes one chi-square per entry.
 */
export function drawScaledChiSquare(
  stream: RandomStream,
  variances: Float64Array,
  df: number,
  out: Float64Array,
): Float64Array {
  for (let i = 0; i < variances.length; i++) out[i] = (variances[i] * stream.chiSquare(df)) / df;
  return out;
}
