/**
 * Lower Cholesky factor for the resampling layer (Σ = L Lᵀ), computed once per request.
 * Kept local so src/resample depends only on the shared risk-model types; it can be replaced by
 * the shared dense kernel without changing any caller.
 *
 * Positive semi-definite input is accepted: a sample covariance from fewer rows than assets is
 * singular, yet N(μ, Σ/T) and Wishart(n, Σ) are still well defined through any L with L Lᵀ = Σ.
 * A pivot within the round-off tolerance of zero gets a zero column (exact for a PSD matrix,
 * whose remaining column is then zero too); a pivot clearly below zero means the matrix is not
 * PSD and throws.
 */
export function lowerCholesky(a: Float64Array, n: number, out: Float64Array = new Float64Array(n * n)): Float64Array {
  if (a.length < n * n || out.length < n * n) throw new RangeError(`lowerCholesky: buffers must hold ${n * n} values`);
  let maxDiagonal = 0;
  for (let i = 0; i < n; i++) maxDiagonal = Math.max(maxDiagonal, Math.abs(a[i * n + i]));
  // Round-off in a Schur complement is of order n·ε·max|a_ii| (the usual backward-error bound
  // for Cholesky, from memory); 64× that is the floor for "numerically zero".
  const tolerance = 64 * Math.max(n, 1) * Number.EPSILON * maxDiagonal;
  for (let j = 0; j < n; j++) {
    const rowJ = j * n;
    let pivot = a[rowJ + j];
    for (let k = 0; k < j; k++) pivot -= out[rowJ + k] * out[rowJ + k];
    if (pivot < -tolerance || Number.isNaN(pivot)) {
      throw new RangeError(`matrix is not positive semi-definite (pivot ${pivot} at index ${j})`);
    }
    if (pivot <= tolerance) {
      out[rowJ + j] = 0;
      for (let i = j + 1; i < n; i++) out[i * n + j] = 0;
    } else {
      const diagonal = Math.sqrt(pivot);
      out[rowJ + j] = diagonal;
      for (let i = j + 1; i < n; i++) {
        const rowI = i * n;
        let s = a[rowI + j];
        for (let k = 0; k < j; k++) s -= out[rowI + k] * out[rowJ + k];
        out[rowI + j] = s / diagonal;
      }
    }
    for (let k = j + 1; k < n; k++) out[rowJ + k] = 0; // upper triangle
  }
  return out;
}
