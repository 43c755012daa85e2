import { choleskyDecompose, choleskySolveInPlace } from '../linalg/dense.js';
import { RATE_TOLERANCE, type BreakEven, type PatternChangeAt, type PatternState } from './forecast-sensitivity.js';
import { followPath } from './forecast-sensitivity-path.js';
import { buildReducedHessian, QpWorkspace, solveQp } from './qp.js';
import type { ReducedHessian } from './qp-hessian.js';
import type { QpProblem, QpSolution } from './qp-types.js';

/**
 * Exact break-even shifts of one linear coefficient c_i of a convex QP (mean-variance: c = μ) at
 * its optimum — a parametric QP step (Best & Grauer 1991, Review of Financial Studies 4(2), who
 * trace the mean-variance optimum as μ moves; Nocedal & Wright, Numerical Optimization 2nd ed.,
 * §16.1 for the KKT system).
 *
 * On a fixed active set (free assets F, assets at a bound B, active rows W = budget and groups at
 * a limit) the optimum and its multipliers are linear in c. With the solver's sign convention
 * Hx − c = A_Wᵀν + z (qp-types.ts), moving c by t·e_i moves them along
 *
 *   H_FF d_F − A_Fᵀ dν = e_i,F,   A_F d_F = 0,   d_B = 0,   dz_B = (H d)_B − e_i,B − A_Bᵀ dν,
 *
 * solved with one factorisation M of the reduced Hessian (Cholesky, or Woodbury for a factor
 * model — the solver's own ReducedHessian) and the Schur complement S = A_F M⁻¹ A_Fᵀ:
 *   y = M⁻¹ e_i,   dν = −S⁻¹ (A_F y),   d_F = y + M⁻¹A_Fᵀ dν.
 * (Equivalently d = Z(ZᵀHZ)⁻¹Zᵀ e_i for a null-space basis Z of the active constraints.) The
 * factorisation and M⁻¹A_Fᵀ are shared by every i, so the whole table costs one factorisation
 * plus one solve and one product with H per asset.
 *
 * The pattern holds while every free weight stays within its bounds, every inactive group within
 * its limits, and every active bound or group multiplier keeps its sign; the first of these to
 * fail, both ways (a ratio test), is the breakpoint. For an asset at a bound, d = 0 and only its
 * own multiplier moves (dz_i = −1): it enters when the shift uses up its multiplier, and moving
 * the other way changes nothing at all.
 *
 * The active pattern is the solver's final working set (bounds held exactly, group limits within
 * 1e-11 of the weight scale); multipliers come from the solve. At a degenerate optimum (an active
 * constraint with a zero multiplier, or an inactive one exactly at its limit) a shift may be 0.
 *
 * Rates below RATE_TOLERANCE of their scale are rounding of an exact zero and never block.
 */

/** Per-asset result: the breakpoints and the direction of the optimum on the base pattern. */
export interface QpShiftResult extends BreakEven {
  /** dx/dc_i on the base active set (length n; zero for an asset at a bound). */
  readonly direction: Float64Array;
}

export class QpSensitivityUnavailable extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'QpSensitivityUnavailable';
  }
}

/**
 * The parametric step of a solved QP. Construct once per optimum (one factorisation), then ask
 * `shiftsOf(i)` for every asset and `weightsAt(i, shift)` for the exact optimum at a shift.
 */
export class QpForecastSensitivity {
  readonly n: number;
  /** Pattern at the base optimum: asset states (−1, 0, +1) and group states. */
  readonly assetState: Int8Array;
  readonly groupState: Int8Array;
  /** Optima beyond a breakpoint found by following the path (one base-factor solve per breakpoint crossed). */
  pathFollows = 0;
  /** Warm-started re-solves where the path could not be followed (degenerate breakpoints). */
  resolves = 0;

  private readonly problem: QpProblem;
  private readonly solution: QpSolution;
  private readonly hessian: ReducedHessian;
  private readonly free: Int32Array;
  private readonly nFree: number;
  /** Active rows: dense coefficient vectors and their group index (−1 for the budget). */
  private readonly rowCoefficients: Float64Array[];
  private readonly rowGroup: Int32Array;
  /** M⁻¹ a_r,F per active row (zero outside F). */
  private readonly rowSolves: Float64Array[];
  /** Cholesky factor of S (m×m). */
  private readonly schur: Float64Array;
  private readonly rhs: Float64Array;
  private readonly y: Float64Array;
  private readonly hd: Float64Array;
  private readonly dnu: Float64Array;
  private workspace: QpWorkspace | undefined;

  constructor(problem: QpProblem, solution: QpSolution) {
    const { constraints } = problem;
    const n = constraints.n;
    this.n = n;
    this.problem = problem;
    this.solution = solution;
    if (!solution.converged) {
      throw new QpSensitivityUnavailable('the base optimum did not converge, so its active pattern is not reliable');
    }
    if (solution.regularisation === 'ridge') {
      throw new QpSensitivityUnavailable('the risk model has no risk along some allowed direction, so the optimum is not unique and has no break-even shifts');
    }
    this.assetState = Int8Array.from(solution.warmStart.assetState);
    this.groupState = Int8Array.from(solution.warmStart.groupState);
    // Fixed assets (equal bounds) and equality groups never change state.
    for (let i = 0; i < n; i++) if (constraints.lower[i] === constraints.upper[i]) this.assetState[i] = -1;
    const free: number[] = [];
    for (let i = 0; i < n; i++) if (this.assetState[i] === 0) free.push(i);
    this.free = Int32Array.from(free);
    this.nFree = free.length;

    const rows: Float64Array[] = [new Float64Array(n).fill(1)];
    const rowGroup: number[] = [-1];
    constraints.groups.forEach((g, k) => {
      if (this.groupState[k] === 0) return;
      const a = new Float64Array(n);
      for (let m = 0; m < g.members.length; m++) a[g.members[m]] += 1;
      rows.push(a);
      rowGroup.push(k);
    });
    this.rowCoefficients = rows;
    this.rowGroup = Int32Array.from(rowGroup);

    this.rhs = new Float64Array(n);
    this.y = new Float64Array(n);
    this.hd = new Float64Array(n);
    this.dnu = new Float64Array(rows.length);
    this.hessian = buildReducedHessian(problem.hessian, n, new QpWorkspace(n, constraints.groups.length)).hessian;
    this.rowSolves = rows.map(() => new Float64Array(n));
    this.schur = new Float64Array(rows.length * rows.length);
    if (this.nFree > 0) this.factorise();
  }

  /** M = H_FF (or H_FF + ρA_FᵀA_F when H_FF alone is singular: exact on A_F d = 0), then S. */
  private factorise(): void {
    const view = { dense: this.rowCoefficients, active: Int32Array.from(this.rowCoefficients.keys()), count: this.rowCoefficients.length };
    let ok = false;
    for (const level of [0, 1] as const) {
      this.hessian.setLevel(level);
      if (this.hessian.factorize(this.free, this.nFree, view)) {
        ok = true;
        break;
      }
    }
    if (!ok) throw new QpSensitivityUnavailable('the reduced Hessian is singular on the optimum’s face, so the optimum is not unique');
    const m = this.rowCoefficients.length;
    const rhs = this.rhs;
    for (let a = 0; a < m; a++) {
      const row = this.rowCoefficients[a];
      for (let q = 0; q < this.nFree; q++) rhs[this.free[q]] = row[this.free[q]];
      this.hessian.solve(rhs, this.rowSolves[a], this.free, this.nFree);
    }
    for (let a = 0; a < m; a++) {
      for (let b = 0; b <= a; b++) {
        let s = 0;
        const ra = this.rowCoefficients[a];
        const yb = this.rowSolves[b];
        for (let q = 0; q < this.nFree; q++) s += ra[this.free[q]] * yb[this.free[q]];
        this.schur[a * m + b] = s;
      }
    }
    if (choleskyDecompose(this.schur, m, this.schur, m, 1e-13) >= 0) {
      throw new QpSensitivityUnavailable('the active constraints are linearly dependent on the free weights (a degenerate optimum)');
    }
  }

  /** The QP and its base optimum (read-only views for the path follower). */
  get baseProblem(): QpProblem {
    return this.problem;
  }
  get baseSolution(): QpSolution {
    return this.solution;
  }
  /** Active rows of the base pattern: dense coefficients and group index (−1: the budget). */
  get activeRows(): readonly Float64Array[] {
    return this.rowCoefficients;
  }
  get activeRowGroups(): Int32Array {
    return this.rowGroup;
  }

  /**
   * Solves the base KKT system  M u + A_Fᵀλ = r_F,  A_F u = s  (u on F, zero elsewhere) with the
   * one factorisation: λ = S⁻¹(Yᵀr − s), u = M⁻¹r − Yλ, Y = M⁻¹A_Fᵀ. One solve with M.
   */
  kktSolve(r: Float64Array, s: Float64Array, u: Float64Array, lambda: Float64Array): void {
    const free = this.free;
    const nf = this.nFree;
    const rhs = this.rhs;
    for (let q = 0; q < nf; q++) rhs[free[q]] = r[free[q]];
    u.fill(0);
    if (nf > 0) this.hessian.solve(rhs, u, free, nf);
    const m = this.rowCoefficients.length;
    for (let a = 0; a < m; a++) {
      const ya = this.rowSolves[a];
      let acc = 0;
      for (let q = 0; q < nf; q++) acc += ya[free[q]] * r[free[q]];
      lambda[a] = acc - s[a];
    }
    choleskySolveInPlace(this.schur, m, lambda, m);
    for (let a = 0; a < m; a++) {
      const ya = this.rowSolves[a];
      const v = lambda[a];
      for (let q = 0; q < nf; q++) u[free[q]] -= v * ya[free[q]];
    }
  }

  /** out ← H·v for a v that is zero outside `support` (true H, no augmentation). */
  hessianTimes(v: Float64Array, support: Int32Array, count: number, out: Float64Array): void {
    this.hessian.multiplyFree(v, support, count, out);
  }

  /** The breakpoints of c_i both ways and the direction dx/dc_i on the base pattern. */
  shiftsOf(i: number): QpShiftResult {
    const n = this.n;
    const { lower, upper } = this.problem.constraints;
    const direction = new Float64Array(n);
    const state = this.assetState[i];
    if (lower[i] === upper[i]) return { up: null, down: null, changesUp: [], changesDown: [], tolerance: 0, direction };
    if (state !== 0) {
      // Only z_i moves (dz_i = −1): it enters once the shift uses up its multiplier.
      const z = this.solution.multipliers.bounds[i];
      const change: PatternChangeAt = { kind: 'asset', index: i, from: state as PatternState, to: 0 };
      if (state === -1) return { up: Math.max(0, z), down: null, changesUp: [change], changesDown: [], tolerance: 0, direction };
      return { up: null, down: Math.max(0, -z), changesUp: [], changesDown: [change], tolerance: 0, direction };
    }
    this.directionOf(i, direction);
    return { ...this.ratioTest(direction), direction };
  }

  /** direction ← d (dx/dc_i) for a free asset i; leaves H d in hd and dν in dnu. */
  private directionOf(i: number, d: Float64Array): void {
    const free = this.free;
    const nf = this.nFree;
    const rhs = this.rhs;
    for (let q = 0; q < nf; q++) rhs[free[q]] = 0;
    rhs[i] = 1;
    const y = this.y;
    this.hessian.solve(rhs, y, free, nf);
    const m = this.rowCoefficients.length;
    const dnu = this.dnu;
    // (A_F y)_a = a_aᵀ M⁻¹ e_i = (M⁻¹ a_a)_i by symmetry.
    for (let a = 0; a < m; a++) dnu[a] = -this.rowSolves[a][i];
    choleskySolveInPlace(this.schur, m, dnu, m);
    d.fill(0);
    for (let q = 0; q < nf; q++) d[free[q]] = y[free[q]];
    for (let a = 0; a < m; a++) {
      const ya = this.rowSolves[a];
      const v = dnu[a];
      for (let q = 0; q < nf; q++) d[free[q]] += v * ya[free[q]];
    }
    this.hessian.multiplyFree(d, free, nf, this.hd);
  }

  /** First breakpoint each way along x + t·d (t > 0 raises c_i, t < 0 lowers it). */
  private ratioTest(d: Float64Array): BreakEven {
    const n = this.n;
    const { lower, upper, groups } = this.problem.constraints;
    const x = this.solution.x;
    const { bounds: z, groups: nu } = this.solution.multipliers;
    const hd = this.hd;
    const dnu = this.dnu;
    let yScale = 0;
    for (let q = 0; q < this.nFree; q++) yScale = Math.max(yScale, Math.abs(this.y[this.free[q]]));
    const xTol = RATE_TOLERANCE * yScale;
    let multiplierScale = 1;
    for (let j = 0; j < n; j++) multiplierScale = Math.max(multiplierScale, Math.abs(hd[j]));
    for (let a = 0; a < dnu.length; a++) multiplierScale = Math.max(multiplierScale, Math.abs(dnu[a]));
    const zTol = RATE_TOLERANCE * multiplierScale;

    // dz_B = (H d)_B − A_Bᵀ dν  (e_i,B = 0: i is free).
    const rowTerm = this.rhs;
    rowTerm.fill(0);
    for (let a = 0; a < this.rowCoefficients.length; a++) {
      const row = this.rowCoefficients[a];
      const v = dnu[a];
      for (let j = 0; j < n; j++) rowTerm[j] += row[j] * v;
    }

    const activeIndex = new Map<number, number>();
    for (let a = 1; a < this.rowGroup.length; a++) activeIndex.set(this.rowGroup[a], a);
    const best = [
      { t: Infinity, changes: [] as PatternChangeAt[] },
      { t: Infinity, changes: [] as PatternChangeAt[] },
    ];
    const offer = (t: number, sideIndex: 0 | 1, change: PatternChangeAt): void => {
      const b = best[sideIndex];
      const tieTol = 1e-9 * Math.max(t, b.t === Infinity ? t : b.t) + 1e-300;
      if (t < b.t - tieTol) {
        b.t = t;
        b.changes = [change];
      } else if (Math.abs(t - b.t) <= tieTol) {
        b.changes.push(change);
      }
    };
    for (const [sideIndex, sigma] of [
      [0, 1],
      [1, -1],
    ] as const) {
      for (let j = 0; j < n; j++) {
        if (lower[j] === upper[j]) continue;
        const s = this.assetState[j];
        if (s === 0) {
          const v = sigma * d[j];
          if (Math.abs(v) <= xTol) continue;
          if (v < 0 && lower[j] > -Infinity) offer(Math.max(0, x[j] - lower[j]) / -v, sideIndex, { kind: 'asset', index: j, from: 0, to: -1 });
          else if (v > 0 && upper[j] < Infinity) offer(Math.max(0, upper[j] - x[j]) / v, sideIndex, { kind: 'asset', index: j, from: 0, to: 1 });
        } else {
          const rate = sigma * (hd[j] - rowTerm[j]);
          if (Math.abs(rate) <= zTol) continue;
          if (s === -1 && rate < 0) offer(Math.max(0, z[j]) / -rate, sideIndex, { kind: 'asset', index: j, from: -1, to: 0 });
          else if (s === 1 && rate > 0) offer(Math.max(0, -z[j]) / rate, sideIndex, { kind: 'asset', index: j, from: 1, to: 0 });
        }
      }
      groups.forEach((g, k) => {
        if (g.min === g.max) return;
        const s = this.groupState[k];
        if (s === 0) {
          if (g.min === -Infinity && g.max === Infinity) return;
          let rate = 0;
          let rateAbs = 0;
          let value = 0;
          for (let m = 0; m < g.members.length; m++) {
            rate += d[g.members[m]];
            rateAbs += Math.abs(d[g.members[m]]);
            value += x[g.members[m]];
          }
          const v = sigma * rate;
          if (Math.abs(v) <= xTol + RATE_TOLERANCE * rateAbs) return;
          if (v < 0 && g.min > -Infinity) offer(Math.max(0, value - g.min) / -v, sideIndex, { kind: 'group', index: k, from: 0, to: -1 });
          else if (v > 0 && g.max < Infinity) offer(Math.max(0, g.max - value) / v, sideIndex, { kind: 'group', index: k, from: 0, to: 1 });
        } else {
          const a = activeIndex.get(k);
          if (a === undefined) return;
          const rate = sigma * dnu[a];
          if (Math.abs(rate) <= zTol) return;
          if (s === -1 && rate < 0) offer(Math.max(0, nu[k]) / -rate, sideIndex, { kind: 'group', index: k, from: -1, to: 0 });
          else if (s === 1 && rate > 0) offer(Math.max(0, -nu[k]) / rate, sideIndex, { kind: 'group', index: k, from: 1, to: 0 });
        }
      });
    }
    return {
      up: best[0].t === Infinity ? null : best[0].t,
      down: best[1].t === Infinity ? null : best[1].t,
      changesUp: best[0].changes,
      changesDown: best[1].changes,
      tolerance: 0,
    };
  }

  /**
   * The exact optimum with c_i moved by `shift` (either sign): linear along the base direction up
   * to the first breakpoint; beyond it the piecewise-linear path is followed through every
   * breakpoint with the base factorisation (forecast-sensitivity-path.ts), or — when that is not
   * possible at a degenerate breakpoint — the QP is re-solved warm-started from the base optimum.
   */
  weightsAt(i: number, shift: number, known?: QpShiftResult): Float64Array {
    const r = known ?? this.shiftsOf(i);
    const limit = shift >= 0 ? r.up : r.down;
    const x = this.solution.x;
    if (limit === null || Math.abs(shift) <= limit) {
      const out = new Float64Array(this.n);
      for (let j = 0; j < this.n; j++) out[j] = x[j] + shift * r.direction[j];
      return out;
    }
    const followed = followPath(this, i, shift);
    if (followed) {
      this.pathFollows++;
      return followed;
    }
    const linear = Float64Array.from(this.problem.linear);
    linear[i] += shift;
    this.workspace ??= new QpWorkspace(this.n, this.problem.constraints.groups.length);
    this.resolves++;
    return solveQp({ ...this.problem, linear }, { warmStart: this.solution.warmStart, workspace: this.workspace }).x;
  }
}
