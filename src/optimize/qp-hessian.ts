import {
  choleskyAppend,
  choleskyDecompose,
  choleskyDeleteIndex,
  choleskyRankOneUpdate,
  choleskySolveInPlace,
} from '../linalg/dense.js';
import { FactorSubsetSolver } from '../linalg/factor-solve.js';
import type { FactorRiskModel } from '../linalg/risk-model.js';

/**
 * The Hessian as the active-set solver sees it: products with the full H, and solves with the
 * reduced matrix H_FF (rows/columns of the free variables, in the order of the caller's free
 * list) that follow the free list as it grows and shrinks by one index at a time.
 *
 * Regularisation levels (see QpRegularisation in qp-types.ts), used only when the level below
 * is not positive definite:
 *   0  H_FF as given;
 *   1  H_FF + ρ·Σ_{r∈W} a_r,F a_r,Fᵀ over the working-set rows W (budget and active group
 *      limits), ρ = trace(H)/n. Every step keeps a_rᵀp = 0 for r ∈ W, so the added term never
 *      changes a step or a multiplier; it only makes H_FF positive definite whenever the Hessian
 *      projected on the face is (the augmented-Lagrangian term ρ‖Ap‖² of Nocedal & Wright
 *      §17.3, which vanishes on the face), without the cancellation a tiny ridge would cause.
 *   2  level 1 + ε·I: a tiny ridge when even the projected Hessian is singular (zero curvature
 *      along some feasible direction); the steps then act as proximal-point steps.
 * Only dense Hessians ever leave level 0: a factor Hessian with positive specific variance and a
 * positive diagonal are positive definite.
 */
export interface ReducedHessian {
  readonly n: number;
  /** trace(H)/n, or 1 when H has zero trace: the scale of ρ and ε. */
  readonly diagonalScale: number;
  /**
   * trace(H)/n as it is (0 for H = 0): the size of a typical entry of H. The solver's tests for
   * "zero" gradients and decreases use curvatureScale·‖x‖ as the rounding floor of Hx (see kkt.ts).
   */
  readonly curvatureScale: number;
  readonly level: RegularisationLevel;
  /** ε currently added at level 2 (0 below). */
  readonly ridge: number;
  /** out ← H x with the true H (no augmentation, no ridge). */
  multiply(x: Float64Array, out: Float64Array): void;
  /** out ← H p for a p that is zero outside free[0..nFree) (cheaper than multiply when few are free). */
  multiplyFree(p: Float64Array, free: Int32Array, nFree: number, out: Float64Array): void;
  /** Switch regularisation; a factorize() must follow. `ridgeBoost` multiplies ε (level 2). */
  setLevel(level: RegularisationLevel, ridgeBoost?: number): void;
  /** Factor the reduced matrix for free[0..nFree) and working-set rows `rows`. false when not (numerically) positive definite. */
  factorize(free: Int32Array, nFree: number, rows: ActiveRows): boolean;
  /** free[nFree−1] has just been appended. false when the enlarged matrix is not positive definite. */
  appendFree(free: Int32Array, nFree: number, rows: ActiveRows): boolean;
  /** The index `index` at list position `position` has just been removed; free/nFree are the list after removal. */
  removeFree(position: number, index: number, free: Int32Array, nFree: number): void;
  /** Row `coefficients` has just joined the working set (matters from level 1 on). */
  addActiveRow(coefficients: Float64Array, free: Int32Array, nFree: number): void;
  /** out_F ← (reduced matrix)⁻¹ rhs_F; full-length vectors indexed by variable, other entries untouched. */
  solve(rhs: Float64Array, out: Float64Array, free: Int32Array, nFree: number): void;
}

/** The working-set rows as dense coefficient vectors (length n each). */
export interface ActiveRows {
  readonly dense: readonly Float64Array[];
  readonly active: Int32Array;
  readonly count: number;
}

export type RegularisationLevel = 0 | 1 | 2;

/** Below level 2, a pivot under this fraction of its diagonal entry counts as zero (numerically singular). */
const MIN_PIVOT_RELATIVE = 1e-10;
/** At level 2 the ridge guarantees positive pivots of about ε; only rounding-level ones are refused. */
const MIN_PIVOT_RELATIVE_RIDGE = 1e-14;
/**
 * ε = RIDGE_RELATIVE·trace(H)/n at level 2. The ridge only shapes the steps (proximal-point
 * steps) and never the answer, so it can be large enough to keep rounding in the solves small
 * (errors grow like u/ε along flat directions).
 */
export const RIDGE_RELATIVE = 1e-10;

/** H = scale·M for a dense symmetric M, with an incrementally updated Cholesky factor of H_FF. */
export class DenseReducedHessian implements ReducedHessian {
  readonly n: number;
  readonly diagonalScale: number;
  readonly curvatureScale: number;
  level: RegularisationLevel = 0;
  ridge = 0;
  private rho = 0;
  private readonly matrix: Float64Array;

  private minPivot(): number {
    return this.level === 2 ? MIN_PIVOT_RELATIVE_RIDGE : MIN_PIVOT_RELATIVE;
  }
  private readonly scale: number;
  /** Cholesky factor of the reduced matrix, leading nFree×nFree block with stride n. */
  private readonly factor: Float64Array;
  private readonly column: Float64Array;

  constructor(n: number, matrix: Float64Array, scale: number, factorBuffer?: Float64Array, columnBuffer?: Float64Array) {
    this.n = n;
    this.matrix = matrix;
    this.scale = scale;
    this.factor = factorBuffer && factorBuffer.length >= n * n ? factorBuffer : new Float64Array(n * n);
    this.column = columnBuffer && columnBuffer.length >= n ? columnBuffer : new Float64Array(n);
    let t = 0;
    for (let i = 0; i < n; i++) t += matrix[i * n + i];
    t *= scale / n;
    this.diagonalScale = t > 0 && Number.isFinite(t) ? t : 1;
    this.curvatureScale = t > 0 && Number.isFinite(t) ? t : 0;
  }

  multiply(x: Float64Array, out: Float64Array): void {
    const n = this.n;
    const m = this.matrix;
    const s = this.scale;
    for (let i = 0; i < n; i++) {
      const row = i * n;
      let acc = 0;
      for (let j = 0; j < n; j++) acc += m[row + j] * x[j];
      out[i] = s * acc;
    }
  }

  multiplyFree(p: Float64Array, free: Int32Array, nFree: number, out: Float64Array): void {
    const n = this.n;
    const m = this.matrix;
    out.fill(0, 0, n);
    // H is symmetric: column j is row j, read contiguously.
    for (let k = 0; k < nFree; k++) {
      const j = free[k];
      const pj = this.scale * p[j];
      if (pj === 0) continue;
      const row = j * n;
      for (let i = 0; i < n; i++) out[i] += m[row + i] * pj;
    }
  }

  setLevel(level: RegularisationLevel, ridgeBoost = 1): void {
    this.level = level;
    this.rho = level >= 1 ? this.diagonalScale : 0;
    this.ridge = level >= 2 ? RIDGE_RELATIVE * this.diagonalScale * ridgeBoost : 0;
  }

  factorize(free: Int32Array, nFree: number, rows: ActiveRows): boolean {
    const n = this.n;
    const l = this.factor;
    const m = this.matrix;
    const s = this.scale;
    for (let j = 0; j < nFree; j++) {
      const row = free[j] * n;
      const lj = j * n;
      for (let k = 0; k <= j; k++) l[lj + k] = s * m[row + free[k]];
      l[lj + j] += this.ridge;
    }
    if (this.rho > 0) {
      for (let a = 0; a < rows.count; a++) {
        const d = rows.dense[rows.active[a]];
        for (let j = 0; j < nFree; j++) {
          const dj = this.rho * d[free[j]];
          if (dj === 0) continue;
          const lj = j * n;
          for (let k = 0; k <= j; k++) l[lj + k] += dj * d[free[k]];
        }
      }
    }
    return choleskyDecompose(l, nFree, l, n, this.minPivot()) < 0;
  }

  appendFree(free: Int32Array, nFree: number, rows: ActiveRows): boolean {
    const i = free[nFree - 1];
    const col = this.column;
    const m = this.matrix;
    const n = this.n;
    const s = this.scale;
    for (let j = 0; j < nFree - 1; j++) col[j] = s * m[free[j] * n + i];
    let alpha = s * m[i * n + i] + this.ridge;
    if (this.rho > 0) {
      for (let a = 0; a < rows.count; a++) {
        const d = rows.dense[rows.active[a]];
        const di = this.rho * d[i];
        if (di === 0) continue;
        for (let j = 0; j < nFree - 1; j++) col[j] += di * d[free[j]];
        alpha += di * d[i];
      }
    }
    return choleskyAppend(this.factor, nFree - 1, col, alpha, n, this.minPivot());
  }

  removeFree(position: number, _index: number, _free: Int32Array, nFree: number): void {
    choleskyDeleteIndex(this.factor, nFree + 1, position, this.column, this.n);
  }

  addActiveRow(coefficients: Float64Array, free: Int32Array, nFree: number): void {
    if (this.rho === 0) return;
    const v = this.column;
    const root = Math.sqrt(this.rho);
    for (let j = 0; j < nFree; j++) v[j] = root * coefficients[free[j]];
    choleskyRankOneUpdate(this.factor, nFree, v, this.n);
  }

  solve(rhs: Float64Array, out: Float64Array, free: Int32Array, nFree: number): void {
    const t = this.column;
    for (let j = 0; j < nFree; j++) t[j] = rhs[free[j]];
    choleskySolveInPlace(this.factor, nFree, t, this.n);
    for (let j = 0; j < nFree; j++) out[free[j]] = t[j];
  }
}

/**
 * H = λ_f·BFBᵀ + λ_s·D with D > 0 (the caller expands to dense otherwise): always positive
 * definite, so it stays at level 0. Reduced solves by Woodbury in O(|F|·K) (never N×N).
 */
export class FactorReducedHessian implements ReducedHessian {
  readonly n: number;
  readonly diagonalScale: number;
  readonly curvatureScale: number;
  readonly level: RegularisationLevel = 0;
  readonly ridge = 0;
  private readonly model: FactorRiskModel;
  private readonly factorScale: number;
  private readonly specificScale: number;
  private readonly solver: FactorSubsetSolver;
  private readonly scratchK: Float64Array;

  constructor(model: FactorRiskModel, factorScale: number, specificScale: number) {
    const n = model.n;
    const k = model.k;
    this.n = n;
    this.model = model;
    this.factorScale = factorScale;
    this.specificScale = specificScale;
    this.solver = new FactorSubsetSolver(n, k);
    this.scratchK = new Float64Array(2 * k);
    this.diagonalScale = factorHessianDiagonalScale(model, factorScale, specificScale);
    // A factor Hessian reaching this class has positive specific variance, so its trace is positive.
    this.curvatureScale = this.diagonalScale;
    const diag = new Float64Array(n);
    for (let i = 0; i < n; i++) diag[i] = specificScale * model.specificVar[i];
    this.solver.setFactorModel(model.loadings, model.factorCov, k, factorScale, diag);
  }

  multiply(x: Float64Array, out: Float64Array): void {
    const { n, k, loadings: b, factorCov: f, specificVar: d } = this.model;
    const t = this.scratchK;
    for (let a = 0; a < k; a++) t[a] = 0;
    for (let i = 0; i < n; i++) {
      const xi = x[i];
      const row = i * k;
      for (let a = 0; a < k; a++) t[a] += b[row + a] * xi;
    }
    for (let a = 0; a < k; a++) {
      let s = 0;
      for (let c = 0; c < k; c++) s += f[a * k + c] * t[c];
      t[k + a] = this.factorScale * s;
    }
    for (let i = 0; i < n; i++) {
      let s = this.specificScale * d[i] * x[i];
      const row = i * k;
      for (let a = 0; a < k; a++) s += b[row + a] * t[k + a];
      out[i] = s;
    }
  }

  multiplyFree(p: Float64Array, free: Int32Array, nFree: number, out: Float64Array): void {
    const { n, k, loadings: b, factorCov: f, specificVar: d } = this.model;
    const t = this.scratchK;
    for (let a = 0; a < k; a++) t[a] = 0;
    for (let q = 0; q < nFree; q++) {
      const i = free[q];
      const pi = p[i];
      const row = i * k;
      for (let a = 0; a < k; a++) t[a] += b[row + a] * pi;
    }
    for (let a = 0; a < k; a++) {
      let s = 0;
      for (let c = 0; c < k; c++) s += f[a * k + c] * t[c];
      t[k + a] = this.factorScale * s;
    }
    for (let i = 0; i < n; i++) {
      const row = i * k;
      let s = 0;
      for (let a = 0; a < k; a++) s += b[row + a] * t[k + a];
      out[i] = s;
    }
    for (let q = 0; q < nFree; q++) {
      const i = free[q];
      out[i] += this.specificScale * d[i] * p[i];
    }
  }

  setLevel(): void {
    // Positive definite by construction: nothing to regularise.
  }

  factorize(free: Int32Array, nFree: number): boolean {
    this.solver.setSubset(free, nFree);
    return true;
  }

  appendFree(free: Int32Array, nFree: number): boolean {
    this.solver.add(free[nFree - 1], free, nFree);
    return true;
  }

  removeFree(_position: number, index: number, free: Int32Array, nFree: number): void {
    this.solver.remove(index, free, nFree);
  }

  addActiveRow(): void {
    // Level 0 only: rows do not enter the reduced matrix.
  }

  solve(rhs: Float64Array, out: Float64Array, free: Int32Array, nFree: number): void {
    this.solver.solve(rhs, out, free, nFree);
  }
}

/** trace(λ_f BFBᵀ + λ_s D)/n (1 when zero). */
export function factorHessianDiagonalScale(model: FactorRiskModel, factorScale: number, specificScale: number): number {
  const { n, k, loadings: b, factorCov: f, specificVar: d } = model;
  let t = 0;
  for (let i = 0; i < n; i++) {
    let s = specificScale * d[i];
    const row = i * k;
    for (let a = 0; a < k; a++) {
      let fa = 0;
      for (let c = 0; c < k; c++) fa += f[a * k + c] * b[row + c];
      s += factorScale * b[row + a] * fa;
    }
    t += s;
  }
  t /= n;
  return t > 0 && Number.isFinite(t) ? t : 1;
}

/** H = diag(d), d > 0: used by the feasibility phase. */
export class DiagonalReducedHessian implements ReducedHessian {
  readonly n: number;
  readonly diagonalScale: number;
  readonly curvatureScale: number;
  readonly level: RegularisationLevel = 0;
  readonly ridge = 0;
  private readonly d: Float64Array;

  constructor(d: Float64Array) {
    this.n = d.length;
    this.d = d;
    let t = 0;
    for (let i = 0; i < d.length; i++) t += d[i];
    this.diagonalScale = t > 0 ? t / d.length : 1;
    this.curvatureScale = t > 0 ? t / d.length : 0;
  }

  multiply(x: Float64Array, out: Float64Array): void {
    for (let i = 0; i < this.n; i++) out[i] = this.d[i] * x[i];
  }

  multiplyFree(p: Float64Array, free: Int32Array, nFree: number, out: Float64Array): void {
    out.fill(0, 0, this.n);
    for (let q = 0; q < nFree; q++) out[free[q]] = this.d[free[q]] * p[free[q]];
  }

  setLevel(): void {
    // A positive diagonal never needs regularising.
  }

  factorize(): boolean {
    return true;
  }

  appendFree(): boolean {
    return true;
  }

  removeFree(): void {
    // Nothing is factored.
  }

  addActiveRow(): void {
    // Level 0 only: rows do not enter the reduced matrix.
  }

  solve(rhs: Float64Array, out: Float64Array, free: Int32Array, nFree: number): void {
    for (let j = 0; j < nFree; j++) {
      const i = free[j];
      out[i] = rhs[i] / this.d[i];
    }
  }
}
