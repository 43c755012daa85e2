import { choleskyDecompose, choleskySolveInPlace } from './dense.js';
import { psdSquareRoot } from './eigen.js';

/**
 * Solves M y = r with M = B(cF)Bᵀ + diag(d) restricted to a subset F of the indices (the free
 * variables of an active-set QP), without ever forming an N×N matrix.
 *
 * Woodbury identity (Sherman–Morrison–Woodbury; Golub & Van Loan, Matrix Computations 4th ed.,
 * §2.1.4): with a square root R Rᵀ = cF and U = B R,
 *   M_FF⁻¹ r = D_F⁻¹r − D_F⁻¹U_F (I + U_FᵀD_F⁻¹U_F)⁻¹ U_FᵀD_F⁻¹r,
 * which equals the textbook form D⁻¹r − D⁻¹B((cF)⁻¹ + BᵀD⁻¹B)⁻¹BᵀD⁻¹r but needs no inverse of F
 * (so a singular factor covariance is fine) and its r×r "capacitance" matrix I + UᵀD⁻¹U is SPD
 * with eigenvalues ≥ 1. Cost O(|F|·r) per solve after an O(|F|·r²) set-up; adding or removing one
 * index updates the capacitance in O(r²) and refactors it in O(r³) (r = rank, small).
 * Requires d_i > 0 on F.
 */
export class FactorSubsetSolver {
  readonly n: number;
  readonly maxRank: number;
  private rank = 0;
  /** U, n × maxRank row-major (only the first `rank` columns are used). */
  private readonly u: Float64Array;
  private readonly dInv: Float64Array;
  /** Σ_{i∈F} u_i u_iᵀ / d_i, maxRank² (stride maxRank). */
  private readonly gram: Float64Array;
  /** Cholesky factor of I + gram. */
  private readonly capacitance: Float64Array;
  private readonly t: Float64Array;
  private updatesSinceRebuild = 0;
  private lastIndices: Int32Array | null = null;
  private lastCount = 0;

  constructor(n: number, maxRank: number) {
    this.n = n;
    this.maxRank = maxRank;
    this.u = new Float64Array(n * Math.max(maxRank, 1));
    this.dInv = new Float64Array(n);
    this.gram = new Float64Array(maxRank * maxRank);
    this.capacitance = new Float64Array(maxRank * maxRank);
    this.t = new Float64Array(maxRank);
  }

  /** Current rank r of U. */
  get currentRank(): number {
    return this.rank;
  }

  /**
   * Loads M = B(cF)Bᵀ + diag(d) plus optional extra rank-one terms Σ s_j e_j e_jᵀ (each column
   * `extraColumns[j]` of length n is added to U as is, i.e. contributes columnᵀ·column outer
   * products). F may be singular PSD (an eigen square root is used then).
   */
  setFactorModel(
    loadings: Float64Array,
    factorCov: Float64Array,
    k: number,
    factorScale: number,
    diag: Float64Array,
    extraColumns: readonly Float64Array[] = [],
  ): void {
    const r = k + extraColumns.length;
    if (r > this.maxRank) throw new RangeError(`rank ${r} exceeds the solver's maximum ${this.maxRank}`);
    const root = factorSquareRoot(factorCov, k, factorScale);
    const n = this.n;
    const ld = this.maxRank;
    const u = this.u;
    for (let i = 0; i < n; i++) {
      const bRow = i * k;
      const uRow = i * ld;
      for (let a = 0; a < k; a++) {
        // (B R)_{ia} = Σ_b B_ib R_ba; R is lower triangular for the Cholesky root, dense for eigen.
        let s = 0;
        for (let b = 0; b < k; b++) s += loadings[bRow + b] * root[b * k + a];
        u[uRow + a] = s;
      }
      for (let e = 0; e < extraColumns.length; e++) u[uRow + k + e] = extraColumns[e][i];
    }
    this.rank = r;
    this.setDiagonal(diag);
  }

  /** Loads M = U Uᵀ + diag(d) directly (U n×r row-major with stride r). */
  setLowRank(uMatrix: Float64Array, r: number, diag: Float64Array): void {
    if (r > this.maxRank) throw new RangeError(`rank ${r} exceeds the solver's maximum ${this.maxRank}`);
    for (let i = 0; i < this.n; i++) {
      for (let a = 0; a < r; a++) this.u[i * this.maxRank + a] = uMatrix[i * r + a];
    }
    this.rank = r;
    this.setDiagonal(diag);
  }

  private setDiagonal(diag: Float64Array): void {
    for (let i = 0; i < this.n; i++) {
      const d = diag[i];
      if (!(d > 0)) throw new RangeError(`diagonal entry ${i} must be > 0 for a Woodbury solve, got ${d}`);
      this.dInv[i] = 1 / d;
    }
    this.lastIndices = null;
  }

  /** Uses the subset indices[0..count) from now on (rebuilds the capacitance, O(count·r²)). */
  setSubset(indices: Int32Array, count: number): void {
    const r = this.rank;
    const ld = this.maxRank;
    const g = this.gram;
    for (let a = 0; a < r; a++) for (let b = 0; b <= a; b++) g[a * ld + b] = 0;
    for (let p = 0; p < count; p++) this.accumulate(indices[p], 1);
    this.updatesSinceRebuild = 0;
    this.lastIndices = indices;
    this.lastCount = count;
    this.refactor();
  }

  /** Adds index i to the subset (the caller's index list must already include it). */
  add(i: number, indices: Int32Array, count: number): void {
    this.update(i, 1, indices, count);
  }

  /** Removes index i from the subset (the caller's index list must already exclude it). */
  remove(i: number, indices: Int32Array, count: number): void {
    this.update(i, -1, indices, count);
  }

  private update(i: number, sign: 1 | -1, indices: Int32Array, count: number): void {
    // Subtracting terms accumulates rounding; rebuild from scratch now and then.
    if (++this.updatesSinceRebuild > 64) {
      this.setSubset(indices, count);
      return;
    }
    this.accumulate(i, sign);
    this.lastIndices = indices;
    this.lastCount = count;
    this.refactor();
  }

  private accumulate(i: number, sign: number): void {
    const r = this.rank;
    const ld = this.maxRank;
    const g = this.gram;
    const row = i * ld;
    const w = sign * this.dInv[i];
    for (let a = 0; a < r; a++) {
      const ua = this.u[row + a] * w;
      for (let b = 0; b <= a; b++) g[a * ld + b] += ua * this.u[row + b];
    }
  }

  private refactor(): void {
    const r = this.rank;
    const ld = this.maxRank;
    const c = this.capacitance;
    for (let a = 0; a < r; a++) {
      for (let b = 0; b < a; b++) c[a * ld + b] = this.gram[a * ld + b];
      c[a * ld + a] = 1 + this.gram[a * ld + a];
    }
    // I + UᵀD⁻¹U has eigenvalues ≥ 1, so this cannot fail unless the input holds NaN.
    const failed = choleskyDecompose(c, r, c, ld);
    if (failed >= 0) throw new RangeError('Woodbury capacitance matrix is not positive definite (non-finite input?)');
  }

  /**
   * out_F ← M_FF⁻¹ rhs_F for the current subset; rhs and out are full-length (indexed by
   * original index), entries outside F are neither read nor written. rhs may equal out.
   */
  solve(rhs: Float64Array, out: Float64Array, indices: Int32Array, count: number): void {
    if (this.lastIndices === null) this.setSubset(indices, count);
    const r = this.rank;
    const ld = this.maxRank;
    const t = this.t;
    const u = this.u;
    t.fill(0, 0, r);
    // y = D⁻¹ rhs (kept in out), t = Uᵀ y.
    for (let p = 0; p < count; p++) {
      const i = indices[p];
      const y = rhs[i] * this.dInv[i];
      out[i] = y;
      const row = i * ld;
      for (let a = 0; a < r; a++) t[a] += u[row + a] * y;
    }
    if (r === 0) return;
    choleskySolveInPlace(this.capacitance, r, t, ld);
    for (let p = 0; p < count; p++) {
      const i = indices[p];
      const row = i * ld;
      let s = 0;
      for (let a = 0; a < r; a++) s += u[row + a] * t[a];
      out[i] -= s * this.dInv[i];
    }
  }

  /** The subset last used (for callers that want to confirm state). */
  get subsetSize(): number {
    return this.lastCount;
  }
}

/**
 * R with R Rᵀ = c·F (k×k row-major): the Cholesky factor when F is positive definite, otherwise
 * the eigen square root V diag(√λ) (F only PSD, e.g. a rank-deficient factor covariance).
 */
export function factorSquareRoot(factorCov: Float64Array, k: number, scale: number): Float64Array {
  if (!(scale >= 0)) throw new RangeError(`factor scale must be ≥ 0, got ${scale}`);
  const root = new Float64Array(k * k);
  const failed = choleskyDecompose(factorCov, k, root, k, 1e-14);
  let result: Float64Array = root;
  if (failed >= 0) {
    result = psdSquareRoot(factorCov, k);
  } else {
    for (let i = 0; i < k; i++) for (let j = i + 1; j < k; j++) root[i * k + j] = 0;
  }
  const s = Math.sqrt(scale);
  for (let i = 0; i < k * k; i++) result[i] *= s;
  return result;
}

/**
 * One-shot convenience: y_F = (B(cF)Bᵀ + diag(d))_FF⁻¹ r_F for the index subset `indices`.
 * Allocates; for tests and occasional use. Entries of `out` outside the subset are set to 0.
 */
export function solveFactorSubset(
  loadings: Float64Array,
  factorCov: Float64Array,
  k: number,
  factorScale: number,
  diag: Float64Array,
  indices: Int32Array,
  rhs: Float64Array,
  out: Float64Array = new Float64Array(diag.length),
): Float64Array {
  const solver = new FactorSubsetSolver(diag.length, k);
  solver.setFactorModel(loadings, factorCov, k, factorScale, diag);
  solver.setSubset(indices, indices.length);
  out.fill(0);
  solver.solve(rhs, out, indices, indices.length);
  return out;
}
