import { choleskyDecompose, choleskySolveInPlace } from '../linalg/dense.js';
import { RIDGE_RELATIVE, type ActiveRows, type ReducedHessian, type RegularisationLevel } from './qp-hessian.js';
import { OptimizationError } from './types.js';

/**
 * Primal active-set method for convex QP (Nocedal & Wright, Numerical Optimization, 2nd ed.,
 * §16.5, Algorithm 16.3):
 *
 *   minimise ½xᵀHx − cᵀx  s.t.  lower ≤ x ≤ upper,  lo_r ≤ a_rᵀx ≤ hi_r for every row r.
 *
 * Bounds are handled implicitly: a variable in the working set sits at its bound and drops out of
 * the reduced system, so only the free variables F enter H_FF (factored incrementally, see
 * qp-hessian.ts). Rows in the working set (the budget and any active group limits — a handful)
 * stay explicit and are eliminated by a Schur complement:
 *
 *   H_FF p − A_Fᵀν = −g_F,  A_F p = 0   ⇒   (A_F H_FF⁻¹ A_Fᵀ) ν = A_F H_FF⁻¹ g_F,
 *                                            p = H_FF⁻¹(A_Fᵀν − g_F),
 *
 * with g = Hx − c. ν are then the row multipliers at x + p, and the bound multipliers of fixed
 * variables are z_B = g_B − A_Bᵀν. Each iteration either steps to the face minimiser (full step),
 * stops at the first blocking constraint (added to the working set), or — when x already minimises
 * over its face — drops the constraint whose multiplier has the wrong sign, or stops (optimal).
 *
 * The working set is kept linearly independent (rows restricted to F have full row rank): the
 * start is cleaned by Gram–Schmidt, and the method only ever adds constraints with a non-zero
 * component along the step, which preserves independence (N&W §16.5).
 * Degenerate cycling is guarded by switching to Bland's smallest-index rule (Bland 1977, "New
 * finite pivoting rules for the simplex method", Math. Oper. Res. 2; citation from memory) for
 * both the entering and the leaving choice after a long run of zero-length steps.
 *
 * Termination on a flat face (singular H under the ridge, level 2): every "zero" — a step, a
 * reduced gradient, a multiplier of the wrong sign — is measured on the KKT scale
 * G = max(‖c‖, ‖Hx‖, h̄·W) of kkt.ts (gradientScale), never on the size of the gradient alone,
 * and x is accepted once the reduced gradient on its face is rounding (faceStationary). At a
 * riskless optimum Hx is itself rounding noise, and without the h̄·W floor the method kept taking
 * rounding-sized ridge steps until its iteration cap. Whatever stops the loop, the caller judges
 * the point by the independent KKT residual (kkt.ts), so an unmet condition is still a failure.
 */

/** One explicit linear row lo ≤ Σ coef_k x_{idx_k} ≤ hi (lo = hi for an equality). */
export interface LinearRow {
  readonly idx: Int32Array;
  readonly coef: Float64Array;
  readonly lo: number;
  readonly hi: number;
}

export interface CoreProblem {
  readonly n: number;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  /** c in ½xᵀHx − cᵀx. */
  readonly linear: Float64Array;
  readonly rows: readonly LinearRow[];
  readonly hessian: ReducedHessian;
  /**
   * Index of a row with coefficient 1 on every variable that is an equality (the budget), or −1.
   * It is always kept in the working set, which makes the ρ·11ᵀ augmentation exact.
   */
  readonly budgetRow: number;
}

/** Working-set states for variables (bounds) and rows. */
export const FREE = 0;
export const AT_LOWER = -1;
export const AT_UPPER = 1;

export interface CoreOptions {
  readonly maxIterations: number;
  /** Relative tolerance for the dual sign test (multipliers below tolerance·gradient scale count as 0). */
  readonly tolerance: number;
}

export interface CoreOutcome {
  readonly iterations: number;
  readonly converged: boolean;
  readonly level: RegularisationLevel;
  readonly ridge: number;
}

/** Components along the step smaller than this fraction of ‖p‖ are rounding and cannot block. */
const DIRECTION_TOLERANCE = 1e-12;
/** Variables within this fraction of the x scale of a bound are snapped to it when a hint says so. */
const SNAP_TOLERANCE = 1e-13;
/** Rows within this fraction of the x scale of a limit may stay in the working set. */
const ROW_TIGHT_TOLERANCE = 1e-11;
/** Step norms below this fraction of the x scale count as zero. */
const STEP_TOLERANCE = 1e-13;
/** Full gradient recomputation after this many incremental updates. */
const GRADIENT_REFRESH = 16;

/** Reusable state and buffers of the active-set method for problems up to nMax variables and mMax rows. */
export class ActiveSetEngine {
  private nMax = 0;
  private mMax = 0;
  private free = new Int32Array(0);
  private pos = new Int32Array(0);
  private nFree = 0;
  private activeRows = new Int32Array(0);
  private nActive = 0;
  private y = new Float64Array(0);
  private yRows: Float64Array[] = [];
  private s = new Float64Array(0);
  private nu = new Float64Array(0);
  private g = new Float64Array(0);
  private p = new Float64Array(0);
  private z0 = new Float64Array(0);
  private work = new Float64Array(0);
  private atNu = new Float64Array(0);
  private hp = new Float64Array(0);
  /** Incremental gradient updates since the last full g = Hx − c (rounding control). */
  private gradientAge = Infinity;
  /** Dense coefficient vectors of the current problem's rows (cached per rows array). */
  private denseRowsFor: readonly LinearRow[] | null = null;
  private denseRowsN = -1;
  private readonly rowsView: { dense: Float64Array[]; active: Int32Array; count: number } = {
    dense: [],
    active: new Int32Array(0),
    count: 0,
  };

  // Per-run references (set in run()).
  private problem!: CoreProblem;
  private x!: Float64Array;
  private varState!: Int8Array;
  private rowState!: Int8Array;
  private level: RegularisationLevel = 0;
  private xScale = 1;
  private bland = false;
  /** The row added by the last blocking step (−1 when the last change was anything else). */
  private lastAddedRow = -1;
  /**
   * Rows found dependent on the working set (restricted to the free variables) when they
   * "blocked": along any step on the current face they stay put up to rounding, so they may not
   * block again until the working set changes. Without this, a dependent row blocking at α = 0
   * is added, dropped by the rank repair, and added again forever (seen with many overlapping
   * group rows on few assets).
   */
  private ignoredRows = new Uint8Array(0);
  private ignoredList: number[] = [];

  constructor(nMax = 0, mMax = 0) {
    this.ensureCapacity(nMax, mMax);
  }

  ensureCapacity(n: number, m: number): void {
    if (n > this.nMax) {
      this.nMax = n;
      this.free = new Int32Array(n);
      this.pos = new Int32Array(n);
      this.g = new Float64Array(n);
      this.p = new Float64Array(n);
      this.z0 = new Float64Array(n);
      this.work = new Float64Array(n);
      this.atNu = new Float64Array(n);
      this.hp = new Float64Array(n);
    }
    const rowsChanged = m > this.mMax;
    if (rowsChanged) {
      this.mMax = m;
      this.activeRows = new Int32Array(m);
      this.ignoredRows = new Uint8Array(m);
      this.ignoredList = [];
      this.s = new Float64Array(m * m);
      this.nu = new Float64Array(m);
    }
    if (rowsChanged || this.y.length < this.mMax * this.nMax) {
      this.y = new Float64Array(this.mMax * this.nMax);
      this.yRows = [];
      for (let a = 0; a < this.mMax; a++) this.yRows.push(this.y.subarray(a * this.nMax, (a + 1) * this.nMax));
    }
  }

  /**
   * Runs the method from the feasible point `x` (modified in place) with `varState`/`rowState` as
   * hints for the starting working set (entries inconsistent with x are dropped). On return they
   * hold the final working set; multipliers are written to rowMultipliers (per row) and
   * boundMultipliers (per variable), with the sign convention of QpMultipliers.
   */
  run(
    problem: CoreProblem,
    x: Float64Array,
    varState: Int8Array,
    rowState: Int8Array,
    rowMultipliers: Float64Array,
    boundMultipliers: Float64Array,
    options: CoreOptions,
  ): CoreOutcome {
    const n = problem.n;
    const m = problem.rows.length;
    this.ensureCapacity(n, m);
    this.problem = problem;
    this.x = x;
    this.varState = varState;
    this.rowState = rowState;
    this.bland = false;
    this.lastAddedRow = -1;
    this.clearIgnoredRows();
    this.prepareDenseRows(problem);
    let xs = 1;
    for (let i = 0; i < n; i++) xs = Math.max(xs, Math.abs(x[i]));
    this.xScale = xs;

    if (!this.normaliseWorkingSet()) {
      // Every variable is fixed by equal bounds: x is the only feasible point.
      this.gradient();
      this.nActive = 0;
      this.writeMultipliers(rowMultipliers, boundMultipliers);
      return { iterations: 0, converged: true, level: 0, ridge: 0 };
    }
    this.level = 0;
    this.factorizeFrom(0);

    let schurDirty = true;
    let lastFullStep = false;
    let lowerLevelTried = false;
    let degenerate = 0;
    let converged = false;
    let iterations = 0;
    const blandAfter = 2 * (n + m) + 10;
    const p = this.p;
    const free = this.free;

    this.gradientAge = Infinity;
    for (; iterations < options.maxIterations; iterations++) {
      if (schurDirty) {
        if (!this.computeSchur()) {
          if (this.lastAddedRow >= 0) {
            // The row that just blocked is dependent on the working set: take it out again and
            // keep it from blocking on this face (see ignoredRows).
            this.undoRowAdd();
            continue;
          }
          // Rounding made the active rows (nearly) dependent: rebuild a clean working set.
          this.clearIgnoredRows();
          this.normaliseWorkingSet();
          this.factorizeFrom(this.level);
          this.gradientAge = Infinity;
          continue;
        }
        schurDirty = false;
      }
      // g = Hx − c is updated by each step (O(n·|F|)); a full product now and then bounds drift.
      if (this.gradientAge > GRADIENT_REFRESH) this.gradient();
      this.computeStep();
      let pNorm = 0;
      for (let j = 0; j < this.nFree; j++) pNorm = Math.max(pNorm, Math.abs(p[free[j]]));

      // After a full step x minimises its face, so a fresh step is rounding — except under the
      // ridge (level 2), whose steps act like proximal-point steps and may need to march on.
      const stationary =
        pNorm <= STEP_TOLERANCE * this.xScale ||
        (this.ridgeActive() ? this.faceStationary() : lastFullStep);
      if (!stationary) {
        const blocker = this.ratioTest(pNorm);
        const alpha = this.blockAlpha;
        if (blocker < 0 || alpha >= 1) {
          if (blocker < 0 && this.ridgeActive() && this.isUnboundedDirection()) {
            throw new OptimizationError(
              'unbounded',
              'the objective decreases without limit: a direction of zero risk improves it and no constraint stops it ' +
                '(for example short positions allowed with a singular covariance)',
            );
          }
          this.takeStep(1);
          lastFullStep = true;
          continue;
        }
        this.takeStep(alpha);
        degenerate = alpha === 0 ? degenerate + 1 : 0;
        if (degenerate > blandAfter) this.bland = true;
        this.addBlocker(blocker);
        lowerLevelTried = false;
        schurDirty = true;
        lastFullStep = false;
        continue;
      }
      if (this.ridgeActive() && !lowerLevelTried) {
        // The face may have become positive definite (projected) since the ridge was needed:
        // exact Newton steps then replace the proximal ones.
        lowerLevelTried = true;
        if (this.tryLevel(1)) {
          schurDirty = true;
          lastFullStep = false;
          continue;
        }
      }
      if (pNorm > 0 && !this.ridgeActive()) {
        // Polish with the (rounding-sized) step when nothing blocks it.
        const blocker = this.ratioTest(pNorm);
        if (blocker < 0 || this.blockAlpha >= 1) this.takeStep(1);
      }
      lastFullStep = false;
      const drop = this.worstMultiplier(options.tolerance);
      if (drop === NONE) {
        converged = true;
        break;
      }
      this.dropConstraint(drop);
      lowerLevelTried = false;
      schurDirty = true;
    }
    if (!converged) {
      if (schurDirty) this.computeSchur();
      this.gradient();
      this.computeStep();
    }
    this.writeMultipliers(rowMultipliers, boundMultipliers);
    // Count passes: a solve that is optimal at its start still made one.
    return { iterations: converged ? iterations + 1 : iterations, converged, level: this.level, ridge: this.problem.hessian.ridge };
  }

  private prepareDenseRows(problem: CoreProblem): void {
    if (this.denseRowsFor !== problem.rows || this.denseRowsN !== problem.n) {
      this.rowsView.dense = problem.rows.map((row) => {
        const d = new Float64Array(problem.n);
        for (let k = 0; k < row.idx.length; k++) d[row.idx[k]] += row.coef[k];
        return d;
      });
      this.denseRowsFor = problem.rows;
      this.denseRowsN = problem.n;
    }
  }

  /** The working-set rows as the Hessian needs them (from level 1 on). */
  private activeView(): ActiveRows {
    this.rowsView.active = this.activeRows;
    this.rowsView.count = this.nActive;
    return this.rowsView;
  }

  private ridgeActive(): boolean {
    return this.level === 2;
  }

  // ---------------------------------------------------------------------------------------------
  // Working set set-up

  /**
   * Builds the free list and active-row list from the hints, keeping only members consistent
   * with x, then makes the active rows independent on F (modified Gram–Schmidt, budget first).
   * Returns false when no variable can be free (all fixed by equal bounds).
   */
  private normaliseWorkingSet(): boolean {
    const { n, lower, upper, rows, budgetRow } = this.problem;
    const x = this.x;
    const vs = this.varState;
    const rs = this.rowState;
    const snap = SNAP_TOLERANCE * this.xScale;
    for (let i = 0; i < n; i++) {
      const l = lower[i];
      const u = upper[i];
      if (l === u) {
        x[i] = l;
        vs[i] = AT_LOWER;
      } else if (vs[i] === AT_LOWER && Math.abs(x[i] - l) <= snap) {
        x[i] = l;
      } else if (vs[i] === AT_UPPER && Math.abs(x[i] - u) <= snap) {
        x[i] = u;
      } else {
        vs[i] = FREE;
      }
    }
    const tight = ROW_TIGHT_TOLERANCE * this.xScale;
    for (let r = 0; r < rows.length; r++) {
      const row = rows[r];
      if (r === budgetRow || row.lo === row.hi) {
        rs[r] = AT_LOWER;
        continue;
      }
      const state = rs[r];
      if (state === FREE) continue;
      const v = rowValue(row, x);
      if (state === AT_LOWER && Math.abs(v - row.lo) <= tight) continue;
      if (state === AT_UPPER && Math.abs(v - row.hi) <= tight) continue;
      rs[r] = FREE;
    }
    for (;;) {
      this.rebuildFreeList();
      if (this.nFree === 0 && !this.releaseOneVariable()) return false;
      if (this.nFree === 0) continue;
      if (this.orthogonaliseActiveRows()) return true;
      // The budget row had no free support: release a variable and try again.
      if (!this.releaseOneVariable()) return false;
    }
  }

  private rebuildFreeList(): void {
    const n = this.problem.n;
    let nf = 0;
    for (let i = 0; i < n; i++) {
      if (this.varState[i] === FREE) {
        this.pos[i] = nf;
        this.free[nf++] = i;
      } else {
        this.pos[i] = -1;
      }
    }
    this.nFree = nf;
  }

  /** Frees the lowest-index variable that is not fixed by equal bounds. */
  private releaseOneVariable(): boolean {
    const { n, lower, upper } = this.problem;
    for (let i = 0; i < n; i++) {
      if (this.varState[i] !== FREE && lower[i] !== upper[i]) {
        this.varState[i] = FREE;
        return true;
      }
    }
    return false;
  }

  /**
   * Orders the active rows (budget, equalities, then the rest by index) and drops any whose
   * restriction to F is dependent on earlier ones. Returns false only if the budget row must go.
   */
  private orthogonaliseActiveRows(): boolean {
    const { rows, budgetRow } = this.problem;
    const rs = this.rowState;
    const order = this.activeRows;
    let count = 0;
    if (budgetRow >= 0) order[count++] = budgetRow;
    for (let r = 0; r < rows.length; r++) if (r !== budgetRow && rs[r] !== FREE && rows[r].lo === rows[r].hi) order[count++] = r;
    for (let r = 0; r < rows.length; r++) if (r !== budgetRow && rs[r] !== FREE && rows[r].lo !== rows[r].hi) order[count++] = r;
    const free = this.free;
    const nf = this.nFree;
    let kept = 0;
    for (let a = 0; a < count; a++) {
      const r = order[a];
      const v = this.yRows[kept];
      for (let j = 0; j < nf; j++) v[free[j]] = 0;
      const row = rows[r];
      for (let k = 0; k < row.idx.length; k++) {
        const i = row.idx[k];
        if (this.pos[i] >= 0) v[i] += row.coef[k];
      }
      const norm0 = freeNorm(v, free, nf);
      if (norm0 > 0) {
        // Two passes of modified Gram–Schmidt (re-orthogonalisation: "twice is enough", Parlett,
        // The Symmetric Eigenvalue Problem).
        for (let pass = 0; pass < 2; pass++) {
          for (let b = 0; b < kept; b++) {
            const q = this.yRows[b];
            let d = 0;
            for (let j = 0; j < nf; j++) d += q[free[j]] * v[free[j]];
            for (let j = 0; j < nf; j++) v[free[j]] -= d * q[free[j]];
          }
        }
      }
      const norm = freeNorm(v, free, nf);
      if (norm0 > 0 && norm > 1e-9 * norm0) {
        for (let j = 0; j < nf; j++) v[free[j]] /= norm;
        order[kept++] = r;
      } else {
        if (r === budgetRow) return false;
        rs[r] = FREE;
      }
    }
    this.nActive = kept;
    return true;
  }

  /** Refactor at a lower level if that is positive definite; otherwise restore the current one. */
  private tryLevel(level: RegularisationLevel): boolean {
    const h = this.problem.hessian;
    const view = this.activeView();
    const current = this.level;
    const currentRidge = h.ridge;
    h.setLevel(level);
    if (h.factorize(this.free, this.nFree, view)) {
      this.level = level;
      return true;
    }
    h.setLevel(current, currentRidge / (RIDGE_RELATIVE * h.diagonalScale));
    if (!h.factorize(this.free, this.nFree, view)) this.factorizeFrom(current);
    return false;
  }

  /** Factor the reduced Hessian, escalating the regularisation level as needed (never lowering it). */
  private factorizeFrom(start: RegularisationLevel): void {
    const h = this.problem.hessian;
    const view = this.activeView();
    for (let level = start; level <= 2; level++) {
      const boosts = level === 2 ? RIDGE_BOOSTS : ONE;
      for (const boost of boosts) {
        h.setLevel(level as RegularisationLevel, boost);
        if (h.factorize(this.free, this.nFree, view)) {
          this.level = level as RegularisationLevel;
          return;
        }
      }
    }
    throw new OptimizationError('singular', 'the reduced Hessian could not be factorised even with a ridge (non-finite input?)');
  }

  // ---------------------------------------------------------------------------------------------
  // Linear algebra of one iteration

  /** Y_a = H_FF⁻¹ a_F for each active row, S = A_F Y and its Cholesky factor. */
  private computeSchur(): boolean {
    const rows = this.problem.rows;
    const h = this.problem.hessian;
    const free = this.free;
    const nf = this.nFree;
    const work = this.work;
    const m = this.nActive;
    const ld = this.mMax;
    for (let a = 0; a < m; a++) {
      const row = rows[this.activeRows[a]];
      for (let j = 0; j < nf; j++) work[free[j]] = 0;
      for (let k = 0; k < row.idx.length; k++) {
        const i = row.idx[k];
        if (this.pos[i] >= 0) work[i] += row.coef[k];
      }
      h.solve(work, this.yRows[a], free, nf);
    }
    const s = this.s;
    for (let a = 0; a < m; a++) {
      const row = rows[this.activeRows[a]];
      for (let b = 0; b <= a; b++) {
        const yb = this.yRows[b];
        let acc = 0;
        for (let k = 0; k < row.idx.length; k++) {
          const i = row.idx[k];
          if (this.pos[i] >= 0) acc += row.coef[k] * yb[i];
        }
        s[a * ld + b] = acc;
      }
    }
    return choleskyDecompose(s, m, s, ld, 1e-13) < 0;
  }

  private gradient(): void {
    const { n, linear } = this.problem;
    this.problem.hessian.multiply(this.x, this.g);
    for (let i = 0; i < n; i++) this.g[i] -= linear[i];
    this.gradientAge = 0;
  }

  /** p_F = H_FF⁻¹(A_Fᵀν − g_F) with ν from the Schur system; p_B = 0. */
  private computeStep(): void {
    const rows = this.problem.rows;
    const free = this.free;
    const nf = this.nFree;
    const z0 = this.z0;
    const p = this.p;
    this.problem.hessian.solve(this.g, z0, free, nf);
    const m = this.nActive;
    const t = this.nu;
    for (let a = 0; a < m; a++) {
      const row = rows[this.activeRows[a]];
      let acc = 0;
      for (let k = 0; k < row.idx.length; k++) {
        const i = row.idx[k];
        if (this.pos[i] >= 0) acc += row.coef[k] * z0[i];
      }
      t[a] = acc;
    }
    if (m > 0) choleskySolveInPlace(this.s, m, t, this.mMax);
    for (let j = 0; j < nf; j++) {
      const i = free[j];
      p[i] = -z0[i];
    }
    for (let a = 0; a < m; a++) {
      const nua = t[a];
      const ya = this.yRows[a];
      for (let j = 0; j < nf; j++) {
        const i = free[j];
        p[i] += nua * ya[i];
      }
    }
    const n = this.problem.n;
    for (let i = 0; i < n; i++) if (this.pos[i] < 0) p[i] = 0;
    // As many independent active rows as free variables: the face is a single point (a vertex),
    // so the exact step is zero. Whatever the solves left is rounding, and following it only
    // lets a dependent row or bound "block" at α = 0 again and again (seen with many
    // overlapping group rows). The multipliers ν above are exact for the vertex.
    if (m >= nf) for (let j = 0; j < nf; j++) p[free[j]] = 0;
  }

  // ---------------------------------------------------------------------------------------------
  // Steps

  private blockAlpha = Infinity;
  private blockSide = 0;

  /**
   * Largest α ≥ 0 keeping x + αp feasible; returns the blocking constraint (variable i as i, row
   * r as n + r) or −1 when nothing ever blocks. α is left in blockAlpha, the side in blockSide.
   */
  private ratioTest(pNorm: number): number {
    const { n, lower, upper, rows } = this.problem;
    const x = this.x;
    const p = this.p;
    const free = this.free;
    const dirTol = DIRECTION_TOLERANCE * pNorm;
    let alpha = Infinity;
    let blocker = -1;
    let side = 0;
    for (let j = 0; j < this.nFree; j++) {
      const i = free[j];
      const pi = p[i];
      let step: number;
      let s: number;
      if (pi < -dirTol && lower[i] > -Infinity) {
        step = Math.max(0, x[i] - lower[i]) / -pi;
        s = AT_LOWER;
      } else if (pi > dirTol && upper[i] < Infinity) {
        step = Math.max(0, upper[i] - x[i]) / pi;
        s = AT_UPPER;
      } else {
        continue;
      }
      if (step < alpha || (this.bland && step === alpha && i < blocker)) {
        alpha = step;
        blocker = i;
        side = s;
      }
    }
    const rs = this.rowState;
    for (let r = 0; r < rows.length; r++) {
      if (rs[r] !== FREE || this.ignoredRows[r]) continue;
      const row = rows[r];
      if (row.lo === -Infinity && row.hi === Infinity) continue;
      let dir = 0;
      let dirAbs = 0;
      let value = 0;
      for (let k = 0; k < row.idx.length; k++) {
        const i = row.idx[k];
        const c = row.coef[k];
        const d = c * p[i];
        dir += d;
        dirAbs += Math.abs(d);
        value += c * x[i];
      }
      if (!(Math.abs(dir) > DIRECTION_TOLERANCE * dirAbs)) continue;
      let step: number;
      let s: number;
      if (dir < 0 && row.lo > -Infinity) {
        step = Math.max(0, value - row.lo) / -dir;
        s = AT_LOWER;
      } else if (dir > 0 && row.hi < Infinity) {
        step = Math.max(0, row.hi - value) / dir;
        s = AT_UPPER;
      } else {
        continue;
      }
      if (step < alpha) {
        alpha = step;
        blocker = n + r;
        side = s;
      }
    }
    this.blockAlpha = alpha;
    this.blockSide = side;
    return blocker;
  }

  private takeStep(alpha: number): void {
    const { n, lower, upper } = this.problem;
    const x = this.x;
    const p = this.p;
    const free = this.free;
    if (alpha === 0) return;
    for (let j = 0; j < this.nFree; j++) {
      const i = free[j];
      let v = x[i] + alpha * p[i];
      // Rounding must not push a free variable through its bound.
      if (v < lower[i]) v = lower[i];
      else if (v > upper[i]) v = upper[i];
      x[i] = v;
    }
    // g(x + αp) = g(x) + α·Hp.
    this.problem.hessian.multiplyFree(p, free, this.nFree, this.hp);
    const g = this.g;
    const hp = this.hp;
    for (let i = 0; i < n; i++) g[i] += alpha * hp[i];
    this.gradientAge++;
  }

  private addBlocker(blocker: number): void {
    const n = this.problem.n;
    this.lastAddedRow = blocker < n ? -1 : blocker - n;
    if (blocker < n) {
      this.clearIgnoredRows();
      const i = blocker;
      this.x[i] = this.blockSide === AT_LOWER ? this.problem.lower[i] : this.problem.upper[i];
      this.varState[i] = this.blockSide;
      const k = this.pos[i];
      const free = this.free;
      for (let j = k + 1; j < this.nFree; j++) {
        free[j - 1] = free[j];
        this.pos[free[j - 1]] = j - 1;
      }
      this.nFree--;
      this.pos[i] = -1;
      this.problem.hessian.removeFree(k, i, free, this.nFree);
    } else {
      const r = blocker - n;
      this.rowState[r] = this.blockSide;
      this.activeRows[this.nActive++] = r;
      if (this.level >= 1) this.problem.hessian.addActiveRow(this.rowsView.dense[r], this.free, this.nFree);
    }
  }

  /**
   * Zero curvature (pᵀHp within the ridge's own contribution ε‖p‖²) together with a clear descent
   * (−gᵀp above rounding): along such a ray the true objective is linear and decreasing.
   */
  private isUnboundedDirection(): boolean {
    const h = this.problem.hessian;
    const n = this.problem.n;
    const hp = this.work;
    h.multiply(this.p, hp);
    let curvature = 0;
    let pp = 0;
    let gp = 0;
    let gg = 0;
    for (let i = 0; i < n; i++) {
      const pi = this.p[i];
      curvature += pi * hp[i];
      pp += pi * pi;
      gp += this.g[i] * pi;
      if (this.pos[i] >= 0) gg += this.g[i] * this.g[i];
    }
    return curvature <= h.ridge * pp && -gp > 1e-10 * Math.sqrt(gg * pp);
  }

  /**
   * Under the ridge, rounding in g leaves steps of size ~u·|g|/ε along flat directions, so the
   * step's size says nothing; what matters is whether x already satisfies stationarity on its
   * face: the reduced gradient g_F − (A_Wᵀν)_F, with ν from the step system, is rounding. The
   * floor is 10·n·ε_mach·G: the worst-case rounding of the n-term products in Hx (Higham,
   * Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, §3.1, γ_n) with a safety
   * factor, on the gradient scale G of gradientScale().
   */
  private faceStationary(): boolean {
    const n = this.problem.n;
    this.accumulateRowTerms();
    const free = this.free;
    let reduced = 0;
    for (let j = 0; j < this.nFree; j++) {
      const i = free[j];
      reduced = Math.max(reduced, Math.abs(this.g[i] - this.atNu[i]));
    }
    return reduced <= 10 * n * Number.EPSILON * this.gradientScale();
  }

  /**
   * G = max(‖c‖∞, ‖Hx‖∞, h̄·W) with h̄ = trace(H)/n and W the x scale: the size below which a
   * reduced gradient or a multiplier is rounding. It is the scale of the KKT
   * residual in kkt.ts (there with max_i H_ii ≥ h̄): Hx is only known to about ε·h·W, because x
   * is only known to ε·W (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002,
   * §7.1). Without the h̄·W floor, at a riskless optimum (Hx ≈ 0, c = 0: a singular covariance
   * with a zero-risk long-only portfolio) G is the rounding noise of Hx itself, so every
   * rounding-sized reduced gradient looks like one to follow and every rounding-sized multiplier like
   * a wrong sign: the method marched on along a flat face until its iteration cap (about a
   * quarter of the minimum-variance draws with fewer observations than assets).
   */
  private gradientScale(): number {
    const { n, linear } = this.problem;
    let scale = this.problem.hessian.curvatureScale * this.xScale;
    for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(linear[i]), Math.abs(this.g[i] + linear[i]));
    return scale;
  }

  // ---------------------------------------------------------------------------------------------
  // Multipliers

  /** atNu ← A_Wᵀν over all variables. */
  private accumulateRowTerms(): void {
    const n = this.problem.n;
    const atNu = this.atNu;
    atNu.fill(0, 0, n);
    const rows = this.problem.rows;
    for (let a = 0; a < this.nActive; a++) {
      const row = rows[this.activeRows[a]];
      const nua = this.nu[a];
      for (let k = 0; k < row.idx.length; k++) atNu[row.idx[k]] += row.coef[k] * nua;
    }
  }

  /**
   * The constraint whose multiplier has the most wrong sign beyond tolerance (variable i as i,
   * active-row position a as n + a), or NONE.
   */
  private worstMultiplier(tolerance: number): number {
    const { n, lower, upper, rows } = this.problem;
    this.accumulateRowTerms();
    const gradScale = this.gradientScale();
    const tol = tolerance * (gradScale > 0 ? gradScale : 1);
    let worst = NONE;
    let worstValue = tol;
    for (let i = 0; i < n; i++) {
      const state = this.varState[i];
      if (state === FREE || lower[i] === upper[i]) continue;
      const z = this.g[i] - this.atNu[i];
      const violation = state === AT_LOWER ? -z : z;
      if (violation > worstValue) {
        worst = i;
        worstValue = violation;
        if (this.bland) return worst;
      }
    }
    for (let a = 0; a < this.nActive; a++) {
      const r = this.activeRows[a];
      const row = rows[r];
      if (r === this.problem.budgetRow || row.lo === row.hi) continue;
      const violation = this.rowState[r] === AT_LOWER ? -this.nu[a] : this.nu[a];
      if (violation > worstValue) {
        worst = n + a;
        worstValue = violation;
        if (this.bland) return worst;
      }
    }
    return worst;
  }

  private dropConstraint(which: number): void {
    const n = this.problem.n;
    this.lastAddedRow = -1;
    this.clearIgnoredRows();
    if (which < n) {
      const i = which;
      this.varState[i] = FREE;
      this.pos[i] = this.nFree;
      this.free[this.nFree++] = i;
      if (!this.problem.hessian.appendFree(this.free, this.nFree, this.activeView())) {
        this.factorizeFrom(Math.min(this.level + 1, 2) as RegularisationLevel);
      }
    } else {
      const a = which - n;
      this.rowState[this.activeRows[a]] = FREE;
      for (let b = a + 1; b < this.nActive; b++) this.activeRows[b - 1] = this.activeRows[b];
      this.nActive--;
      // The augmented matrix loses a term: refactor (row drops are rare).
      if (this.level >= 1) this.factorizeFrom(this.level);
    }
  }

  /** Takes the last added row out of the working set again and marks it as ignored. */
  private undoRowAdd(): void {
    const r = this.lastAddedRow;
    this.lastAddedRow = -1;
    this.nActive--;
    this.rowState[r] = FREE;
    this.ignoredRows[r] = 1;
    this.ignoredList.push(r);
    if (this.level >= 1) this.factorizeFrom(this.level);
  }

  private clearIgnoredRows(): void {
    for (const r of this.ignoredList) this.ignoredRows[r] = 0;
    this.ignoredList.length = 0;
  }

  private writeMultipliers(rowMultipliers: Float64Array, boundMultipliers: Float64Array): void {
    const n = this.problem.n;
    rowMultipliers.fill(0, 0, this.problem.rows.length);
    for (let a = 0; a < this.nActive; a++) rowMultipliers[this.activeRows[a]] = this.nu[a];
    this.accumulateRowTerms();
    for (let i = 0; i < n; i++) boundMultipliers[i] = this.varState[i] === FREE ? 0 : this.g[i] - this.atNu[i];
  }
}

const NONE = -1;
const ONE = [1];
/** Ridge multipliers tried in turn at level 2 (ε = RIDGE_RELATIVE·trace/n first). */
const RIDGE_BOOSTS = [1, 1e2, 1e4];

function rowValue(row: LinearRow, x: Float64Array): number {
  let v = 0;
  for (let k = 0; k < row.idx.length; k++) v += row.coef[k] * x[row.idx[k]];
  return v;
}

function freeNorm(v: Float64Array, free: Int32Array, nf: number): number {
  let s = 0;
  for (let j = 0; j < nf; j++) s += v[free[j]] * v[free[j]];
  return Math.sqrt(s);
}
