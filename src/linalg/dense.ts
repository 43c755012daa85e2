/**
 * Dense kernels on row-major Float64Array matrices.
 *
 * Every kernel that works on a (sub)matrix takes a leading dimension `ld` (the row stride), so a
 * k×k factor can live inside a larger n×n buffer and grow or shrink without reallocation — the
 * active-set QP solver keeps its reduced Cholesky factor that way. Only the lower triangle of a
 * Cholesky factor is meaningful; kernels never read the strict upper triangle of L.
 *
 * Algorithms: Golub & Van Loan, Matrix Computations (4th ed.): Cholesky §4.2 (row-oriented
 * "dot product" form), triangular solves §3.1, updating a Cholesky factor §6.5 (the rank-one
 * update is a sequence of plane rotations, stable because nothing is subtracted).
 */

/** Thrown when a matrix that must be symmetric positive definite has a non-positive pivot. */
export class NotPositiveDefiniteError extends Error {
  constructor(
    /** Row/column (0-based) at which elimination met the non-positive pivot. */
    readonly pivotIndex: number,
    /** The value the pivot had before the square root (≤ the accepted minimum). */
    readonly pivotValue: number,
  ) {
    super(`matrix is not positive definite: pivot ${pivotIndex} is ${pivotValue}`);
    this.name = 'NotPositiveDefiniteError';
  }
}

/**
 * Cholesky factorisation A = L Lᵀ of the leading n×n block of `a` (lower triangle read).
 * L is written into the lower triangle of `out` (which may be `a`); the strict upper triangle of
 * `out` is left untouched. A pivot (the Schur complement a_jj − Σ l_jk² before the square root)
 * must exceed `minPivotRelative · a_jj` (and 0); the first that does not is returned.
 *
 * @returns −1 on success, otherwise the 0-based index of the failing pivot (then `out` is
 *   partially overwritten). The failing pivot value is left in `out[j·ld + j]`.
 */
export function choleskyDecompose(
  a: Float64Array,
  n: number,
  out: Float64Array = a,
  ld: number = n,
  minPivotRelative = 0,
): number {
  for (let j = 0; j < n; j++) {
    const rowJ = j * ld;
    // Row j of L, left of the diagonal: l_jk = (a_jk − Σ_{m<k} l_jm l_km) / l_kk.
    for (let k = 0; k < j; k++) {
      const rowK = k * ld;
      let s = a[rowJ + k];
      for (let m = 0; m < k; m++) s -= out[rowJ + m] * out[rowK + m];
      out[rowJ + k] = s / out[rowK + k];
    }
    const ajj = a[rowJ + j];
    let d = ajj;
    for (let m = 0; m < j; m++) {
      const l = out[rowJ + m];
      d -= l * l;
    }
    if (!(d > 0) || d <= minPivotRelative * Math.abs(ajj)) {
      out[rowJ + j] = d;
      return j;
    }
    out[rowJ + j] = Math.sqrt(d);
  }
  return -1;
}

/** Cholesky factor of an SPD n×n matrix into a new buffer; throws NotPositiveDefiniteError. */
export function choleskyOrThrow(a: Float64Array, n: number, minPivotRelative = 0): Float64Array {
  const out = new Float64Array(n * n);
  const failed = choleskyDecompose(a, n, out, n, minPivotRelative);
  if (failed >= 0) throw new NotPositiveDefiniteError(failed, out[failed * n + failed]);
  // Zero the strict upper triangle so the result is a clean lower-triangular matrix.
  for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) out[i * n + j] = 0;
  return out;
}

/**
 * Lower Cholesky factor L (Σ = L Lᵀ, n×n row-major, strict upper triangle zeroed) of a symmetric
 * positive SEMI-definite matrix, into `out` (allocated when absent). Unlike choleskyDecompose,
 * singular input is accepted: a sample covariance from fewer rows than assets is singular, yet
 * N(μ, Σ/T) and Wishart(n, Σ) are still well defined through any L with L Lᵀ = Σ (the
 * resampling layer's use). A pivot within the round-off tolerance of zero gets a zero column
 * (exact for a PSD matrix, whose remaining column is then zero too); a pivot clearly below zero
 * means the matrix is not PSD and throws a RangeError. Column-oriented form of the same
 * recurrence as choleskyDecompose (Golub & Van Loan §4.2); same sums in the same order, so on an
 * SPD matrix both give the same factor.
 * `acceptedNegative`: pivots down to −acceptedNegative also get a zero column instead of throwing,
 * for a matrix already judged PSD to a looser tolerance (validation accepts λ_min ≥ −δ, and such a
 * matrix's pivots can fall to about −δ, far below the round-off floor); its factor is that of the
 * matrix with those directions clipped at 0, as the repair does.
 */
export function choleskyPsd(a: Float64Array, n: number, out: Float64Array = new Float64Array(n * n), acceptedNegative = 0): Float64Array {
  if (a.length < n * n || out.length < n * n) throw new RangeError(`choleskyPsd: buffers must hold ${n * n} values`);
  let maxDiagonal = 0;
  for (let i = 0; i < n; i++) maxDiagonal = Math.max(maxDiagonal, Math.abs(a[i * n + i]));
  // Round-off in a Schur complement is of order n·ε·max|a_ii| (the usual backward-error bound
  // for Cholesky, from memory); 64× that is the floor for "numerically zero".
  const tolerance = 64 * Math.max(n, 1) * Number.EPSILON * maxDiagonal;
  for (let j = 0; j < n; j++) {
    const rowJ = j * n;
    let pivot = a[rowJ + j];
    for (let k = 0; k < j; k++) pivot -= out[rowJ + k] * out[rowJ + k];
    if (pivot < -Math.max(tolerance, acceptedNegative) || Number.isNaN(pivot)) {
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

/** Solves L y = b in place (b ← y) for the lower-triangular leading n×n block of `l`. */
export function solveLowerInPlace(l: Float64Array, n: number, b: Float64Array, ld: number = n): Float64Array {
  for (let i = 0; i < n; i++) {
    const row = i * ld;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[row + k] * b[k];
    b[i] = s / l[row + i];
  }
  return b;
}

/** Solves Lᵀ x = y in place (y ← x) for the lower-triangular leading n×n block of `l`. */
export function solveLowerTransposeInPlace(l: Float64Array, n: number, y: Float64Array, ld: number = n): Float64Array {
  // Column-oriented back substitution: after x_i is known, remove its contribution from rows < i.
  for (let i = n - 1; i >= 0; i--) {
    const row = i * ld;
    const xi = y[i] / l[row + i];
    y[i] = xi;
    for (let k = 0; k < i; k++) y[k] -= l[row + k] * xi;
  }
  return y;
}

/** Solves (L Lᵀ) x = b in place given the Cholesky factor L. */
export function choleskySolveInPlace(l: Float64Array, n: number, b: Float64Array, ld: number = n): Float64Array {
  solveLowerInPlace(l, n, b, ld);
  return solveLowerTransposeInPlace(l, n, b, ld);
}

/** Solves A x = b for SPD A (n×n); allocates. Throws NotPositiveDefiniteError. */
export function solveSpd(a: Float64Array, n: number, b: Float64Array, out: Float64Array = new Float64Array(n)): Float64Array {
  const l = choleskyOrThrow(a, n);
  out.set(b.subarray(0, n));
  return choleskySolveInPlace(l, n, out);
}

/**
 * Rank-one update of a Cholesky factor: given L (n×n, lower, leading block of stride `ld`) with
 * A = L Lᵀ, overwrite it with the factor of A + v vᵀ. `v` is destroyed. O(n²), always stable
 * (Golub & Van Loan §6.5).
 */
export function choleskyRankOneUpdate(l: Float64Array, n: number, v: Float64Array, ld: number = n): void {
  choleskyRankOneUpdateAt(l, 0, n, v, ld);
}

/**
 * Removes row and column `k` from the matrix whose Cholesky factor is the leading n×n block of
 * `l`, leaving the (n−1)×(n−1) factor in place. Deleting row k of L leaves the trailing block to
 * absorb the rank-one term l₂l₂ᵀ (l₂ = L[k+1:, k]): L₂₂'L₂₂'ᵀ = L₂₂L₂₂ᵀ + l₂l₂ᵀ, then rows/columns
 * shift up/left. `scratch` needs length ≥ n. O(n²).
 */
export function choleskyDeleteIndex(l: Float64Array, n: number, k: number, scratch: Float64Array, ld: number = n): void {
  const tail = n - k - 1;
  for (let i = 0; i < tail; i++) scratch[i] = l[(k + 1 + i) * ld + k];
  // Update the trailing block in its current position (rows/cols k+1..n−1).
  if (tail > 0) choleskyRankOneUpdateAt(l, k + 1, tail, scratch, ld);
  // Shift rows k+1.. up by one, and columns k+1.. left by one (lower triangle only).
  for (let i = k + 1; i < n; i++) {
    const src = i * ld;
    const dst = (i - 1) * ld;
    for (let j = 0; j < k; j++) l[dst + j] = l[src + j];
    for (let j = k + 1; j <= i; j++) l[dst + j - 1] = l[src + j];
  }
}

/** Rank-one update of the trailing factor block that starts at (offset, offset). */
function choleskyRankOneUpdateAt(l: Float64Array, offset: number, m: number, v: Float64Array, ld: number): void {
  for (let k = 0; k < m; k++) {
    const kk = (offset + k) * ld + offset + k;
    const lkk = l[kk];
    const vk = v[k];
    const r = Math.hypot(lkk, vk);
    const c = r / lkk;
    const s = vk / lkk;
    l[kk] = r;
    for (let i = k + 1; i < m; i++) {
      const ik = (offset + i) * ld + offset + k;
      const lik = (l[ik] + s * v[i]) / c;
      l[ik] = lik;
      v[i] = c * v[i] - s * lik;
    }
  }
}

/**
 * Appends one row/column to a factored matrix: the new matrix is [[A, a],[aᵀ, α]] with A = L Lᵀ
 * (n×n). `col` holds a (length n, destroyed: it becomes the new row of L). Fails (returns false,
 * L unchanged in its leading n×n block) when the new pivot α − ‖L⁻¹a‖² ≤ minPivotRelative·|α|.
 */
export function choleskyAppend(
  l: Float64Array,
  n: number,
  col: Float64Array,
  alpha: number,
  ld: number,
  minPivotRelative = 0,
): boolean {
  solveLowerInPlace(l, n, col, ld);
  let d = alpha;
  for (let i = 0; i < n; i++) d -= col[i] * col[i];
  if (!(d > 0) || d <= minPivotRelative * Math.abs(alpha)) return false;
  const row = n * ld;
  for (let i = 0; i < n; i++) l[row + i] = col[i];
  l[row + n] = Math.sqrt(d);
  return true;
}

/** out ← A x for a rows×cols row-major A. */
export function matVec(a: Float64Array, rows: number, cols: number, x: Float64Array, out: Float64Array): Float64Array {
  for (let i = 0; i < rows; i++) {
    const row = i * cols;
    let s = 0;
    for (let j = 0; j < cols; j++) s += a[row + j] * x[j];
    out[i] = s;
  }
  return out;
}

/** out ← Aᵀ x for a rows×cols row-major A (out has length cols). */
export function matTVec(a: Float64Array, rows: number, cols: number, x: Float64Array, out: Float64Array): Float64Array {
  out.fill(0, 0, cols);
  for (let i = 0; i < rows; i++) {
    const row = i * cols;
    const xi = x[i];
    if (xi === 0) continue;
    for (let j = 0; j < cols; j++) out[j] += a[row + j] * xi;
  }
  return out;
}

/** Σ a_i b_i over the first n entries. */
export function dot(a: Float64Array, b: Float64Array, n: number = a.length): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i] * b[i];
  return s;
}

/** Trace of the n×n matrix a. */
export function trace(a: Float64Array, n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += a[i * n + i];
  return s;
}

/** Largest |a_ij − a_ji|, to check symmetry of inputs. */
export function asymmetry(a: Float64Array, n: number): number {
  let m = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const d = Math.abs(a[i * n + j] - a[j * n + i]);
      if (d > m) m = d;
    }
  }
  return m;
}
