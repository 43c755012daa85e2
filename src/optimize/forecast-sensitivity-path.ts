import { LuDecomposition, Matrix } from 'ml-matrix';
import { RATE_TOLERANCE } from './forecast-sensitivity.js';
import type { QpForecastSensitivity } from './forecast-sensitivity-qp.js';
import { kktResidual } from './kkt.js';

/**
 * The exact optimum of the QP with c_i moved by a shift, by following the piecewise-linear path
 * of optima from the base (parametric QP, Best & Grauer 1991) through every breakpoint on the way,
 * reusing the base factorisation: each change of the active set borders the base KKT matrix K
 * (Schur-complement updating, Gill, Murray, Saunders & Wright 1990, "A Schur-complement method
 * for sparse quadratic programming"; Nocedal & Wright §16.5):
 *
 *   [K  C] [v]   [r]          fix a free weight: c = (e_j, 0)        (new multiplier)
 *   [Cᵀ D] [w] = [ρ]          free a weight held at a bound: c = (H_Fk, A_Wk), D ∋ H_kk, a_g(k)
 *                             add a group row: c = (a_g,F, 0)        (new multiplier)
 *                             drop an active group row: c = (0, e_r) (forces its multiplier to 0)
 *
 * solved as G w = ρ − CᵀK⁻¹r, v = K⁻¹r − K⁻¹C w with G = D − CᵀK⁻¹C (q×q, q = changes so far).
 * Each change costs one solve with the base factor; undoing a change drops its border.
 *
 * Returns undefined when the path cannot be followed this way (more than MAX_CHANGES changes, a
 * singular G at a degenerate breakpoint, or an end point whose KKT residual with the multipliers
 * carried along the path exceeds PATH_KKT_TOLERANCE): the caller then re-solves the QP
 * warm-started.
 */
export const MAX_CHANGES = 40;
/** Largest scaled KKT residual (kkt.ts) accepted at the end of a followed path. */
export const PATH_KKT_TOLERANCE = 1e-9;

type Border =
  | { readonly kind: 'fix'; readonly j: number }
  | { readonly kind: 'release'; readonly k: number }
  | { readonly kind: 'add-row'; readonly g: number }
  | { readonly kind: 'drop-row'; readonly a: number };

interface BorderData {
  readonly border: Border;
  /** K⁻¹c: u part (n) and λ part (m), and H·u. */
  readonly u: Float64Array;
  readonly lambda: Float64Array;
  readonly hu: Float64Array;
}

export function followPath(s: QpForecastSensitivity, i: number, shift: number): Float64Array | undefined {
  const problem = s.baseProblem;
  const solution = s.baseSolution;
  const { n, lower, upper, groups } = problem.constraints;
  const rows = s.activeRows;
  const rowGroup = s.activeRowGroups;
  const m = rows.length;
  const sign = shift >= 0 ? 1 : -1;
  const target = Math.abs(shift);
  const baseRowOf = new Map<number, number>();
  for (let a = 1; a < m; a++) baseRowOf.set(rowGroup[a], a);

  // Current point, states and multipliers along the path.
  const x = Float64Array.from(solution.x);
  const assetState = Int8Array.from(s.assetState);
  const groupState = Int8Array.from(s.groupState);
  const z = Float64Array.from(solution.multipliers.bounds);
  const nu = Float64Array.from(solution.multipliers.groups);
  let nuBudget = solution.multipliers.budget;
  const baseFree = Uint8Array.from(s.assetState, (v) => (v === 0 ? 1 : 0));
  for (let j = 0; j < n; j++) if (lower[j] === upper[j]) baseFree[j] = 0;

  const borders: BorderData[] = [];
  const zeroS = new Float64Array(m);
  const r = new Float64Array(n);
  const column = new Float64Array(n);
  const unit = new Float64Array(n);
  const one = new Int32Array(1);

  const addBorder = (border: Border): void => {
    const u = new Float64Array(n);
    const lambda = new Float64Array(m);
    const sw = new Float64Array(m);
    r.fill(0);
    if (border.kind === 'fix') r[border.j] = 1;
    else if (border.kind === 'add-row') {
      const g = groups[border.g];
      for (let q = 0; q < g.members.length; q++) if (baseFree[g.members[q]]) r[g.members[q]] += 1;
    } else if (border.kind === 'release') {
      unit.fill(0);
      unit[border.k] = 1;
      one[0] = border.k;
      s.hessianTimes(unit, one, 1, column);
      for (let j = 0; j < n; j++) r[j] = baseFree[j] ? column[j] : 0;
      for (let a = 0; a < m; a++) sw[a] = rows[a][border.k];
    } else {
      sw[border.a] = 1;
    }
    // For drop-row, r is 0: K⁻¹(0, e_a) solves M u + Aᵀλ = 0, A u = e_a.
    s.kktSolve(r, sw, u, lambda);
    borders.push({ border, u, lambda, hu: hessianOnFree(u) });
  };
  const removeBorder = (match: (b: Border) => boolean): boolean => {
    const index = borders.findIndex((b) => match(b.border));
    if (index < 0) return false;
    borders.splice(index, 1);
    return true;
  };

  const freeList = new Int32Array(n);
  let freeCount = 0;
  for (let j = 0; j < n; j++) if (baseFree[j]) freeList[freeCount++] = j;
  function hessianOnFree(u: Float64Array): Float64Array {
    const out = new Float64Array(n);
    s.hessianTimes(u, freeList, freeCount, out);
    return out;
  }
  /** c_bᵀ(u, λ) for a vector (u on F, λ on base rows; hu = H·u). */
  const project = (b: Border, u: Float64Array, lambda: Float64Array, hu: Float64Array): number => {
    switch (b.kind) {
      case 'fix':
        return u[b.j];
      case 'add-row': {
        const g = groups[b.g];
        let acc = 0;
        for (let q = 0; q < g.members.length; q++) if (baseFree[g.members[q]]) acc += u[g.members[q]];
        return acc;
      }
      case 'drop-row':
        return lambda[b.a];
      case 'release': {
        let acc = hu[b.k];
        for (let a = 0; a < m; a++) acc += rows[a][b.k] * lambda[a];
        return acc;
      }
    }
  };
  /** D entry between two borders. */
  const coupling = (a: Border, b: Border): number => {
    if (a.kind === 'release' && b.kind === 'release') {
      unit.fill(0);
      unit[b.k] = 1;
      one[0] = b.k;
      s.hessianTimes(unit, one, 1, column);
      return column[a.k];
    }
    if (a.kind === 'release' && b.kind === 'add-row') return groups[b.g].members.includes(a.k) ? 1 : 0;
    if (a.kind === 'add-row' && b.kind === 'release') return groups[a.g].members.includes(b.k) ? 1 : 0;
    return 0;
  };

  // Base solve for r = σ·e_i (on F); the release border of i carries σ in its own equation.
  const u0 = new Float64Array(n);
  const lambda0 = new Float64Array(m);
  const ri = new Float64Array(n);
  if (baseFree[i]) ri[i] = sign;
  s.kktSolve(ri, zeroS, u0, lambda0);
  const hu0 = hessianOnFree(u0);

  const d = new Float64Array(n);
  const lambda = new Float64Array(m);
  const dz = new Float64Array(n);
  const dnu = new Float64Array(groups.length);
  const hd = new Float64Array(n);
  const support = new Int32Array(n);
  let t = 0;
  for (let step = 0; step <= MAX_CHANGES; step++) {
    // Direction on the current active set.
    const q = borders.length;
    d.set(u0);
    lambda.set(lambda0);
    let w: Float64Array = new Float64Array(0);
    if (q > 0) {
      const g = new Matrix(q, q);
      const rhs = new Matrix(q, 1);
      for (let a = 0; a < q; a++) {
        const own = borders[a].border;
        rhs.set(a, 0, (own.kind === 'release' && own.k === i ? sign : 0) - project(own, u0, lambda0, hu0));
        for (let b = 0; b < q; b++) {
          const other = borders[b];
          g.set(a, b, coupling(own, other.border) - project(own, other.u, other.lambda, other.hu));
        }
      }
      const lu = new LuDecomposition(g);
      if (lu.isSingular()) return undefined;
      w = Float64Array.from(lu.solve(rhs).to1DArray());
      for (let a = 0; a < q; a++) {
        const v = w[a];
        const bd = borders[a];
        for (let j = 0; j < n; j++) d[j] -= v * bd.u[j];
        for (let k = 0; k < m; k++) lambda[k] -= v * bd.lambda[k];
      }
    }
    // Full direction: released weights carry their border unknowns; fixed ones are 0.
    for (let a = 0; a < q; a++) {
      const b = borders[a].border;
      if (b.kind === 'release') d[b.k] = w[a];
      else if (b.kind === 'fix') d[b.j] = 0;
    }
    // Group multiplier rates: base rows −λ (0 once dropped), added rows −w.
    dnu.fill(0);
    for (let a = 1; a < m; a++) dnu[rowGroup[a]] = -lambda[a];
    const budgetRate = -lambda[0];
    for (let a = 0; a < q; a++) {
      const b = borders[a].border;
      if (b.kind === 'add-row') dnu[b.g] = -w[a];
      if (b.kind === 'drop-row') dnu[rowGroup[b.a]] = 0;
    }
    // Bound multiplier rates dz_j = (H d)_j − σ[j = i] − budget rate − Σ_active groups ∋ j dν_g.
    let count = 0;
    for (let j = 0; j < n; j++) if (d[j] !== 0) support[count++] = j;
    s.hessianTimes(d, support, count, hd);
    for (let j = 0; j < n; j++) dz[j] = hd[j] - (j === i ? sign : 0) - budgetRate;
    groups.forEach((g, k) => {
      if (groupState[k] === 0 || dnu[k] === 0) return;
      for (let p = 0; p < g.members.length; p++) dz[g.members[p]] -= dnu[k];
    });

    // Ratio test on the current pattern.
    let dScale = 0;
    for (let j = 0; j < n; j++) dScale = Math.max(dScale, Math.abs(d[j]));
    let rateScale = 1;
    for (let j = 0; j < n; j++) rateScale = Math.max(rateScale, Math.abs(hd[j]));
    const xTol = RATE_TOLERANCE * dScale;
    const zTol = RATE_TOLERANCE * rateScale;
    // The first event: kind 0 a weight reaches a bound, 1 a weight leaves its bound, 2 a group
    // reaches a limit, 3 a group leaves its limit (no closures: this runs per candidate).
    let best = Infinity;
    let eventKind = -1;
    let eventIndex = -1;
    let eventSide: -1 | 1 = 1;
    const offer = (dt: number, kind: number, index: number, side: -1 | 1): void => {
      if (dt < best) {
        best = dt;
        eventKind = kind;
        eventIndex = index;
        eventSide = side;
      }
    };
    for (let j = 0; j < n; j++) {
      if (lower[j] === upper[j]) continue;
      const st = assetState[j];
      if (st === 0) {
        const v = d[j];
        if (Math.abs(v) <= xTol) continue;
        if (v < 0 && lower[j] > -Infinity) offer(Math.max(0, x[j] - lower[j]) / -v, 0, j, -1);
        else if (v > 0 && upper[j] < Infinity) offer(Math.max(0, upper[j] - x[j]) / v, 0, j, 1);
      } else {
        const v = dz[j];
        if (Math.abs(v) <= zTol) continue;
        if (st === -1 && v < 0) offer(Math.max(0, z[j]) / -v, 1, j, 1);
        else if (st === 1 && v > 0) offer(Math.max(0, -z[j]) / v, 1, j, 1);
      }
    }
    for (let k = 0; k < groups.length; k++) {
      const g = groups[k];
      if (g.min === g.max) continue;
      if (groupState[k] === 0) {
        let rate = 0;
        let rateAbs = 0;
        let value = 0;
        for (let p = 0; p < g.members.length; p++) {
          rate += d[g.members[p]];
          rateAbs += Math.abs(d[g.members[p]]);
          value += x[g.members[p]];
        }
        if (Math.abs(rate) <= xTol + RATE_TOLERANCE * rateAbs) continue;
        if (rate < 0 && g.min > -Infinity) offer(Math.max(0, value - g.min) / -rate, 2, k, -1);
        else if (rate > 0 && g.max < Infinity) offer(Math.max(0, g.max - value) / rate, 2, k, 1);
      } else {
        const v = dnu[k];
        if (Math.abs(v) <= zTol) continue;
        if (groupState[k] === -1 && v < 0) offer(Math.max(0, nu[k]) / -v, 3, k, 1);
        else if (groupState[k] === 1 && v > 0) offer(Math.max(0, -nu[k]) / v, 3, k, 1);
      }
    }
    const dt = Math.min(best, target - t);
    for (let j = 0; j < n; j++) {
      x[j] += dt * d[j];
      if (assetState[j] !== 0) z[j] += dt * dz[j];
    }
    for (let k = 0; k < groups.length; k++) if (groupState[k] !== 0) nu[k] += dt * dnu[k];
    nuBudget += dt * budgetRate;
    t += dt;
    if (t >= target || eventKind < 0) return verified();
    if (eventKind === 0) hitBound(eventIndex, eventSide);
    else if (eventKind === 1) leaveBound(eventIndex);
    else if (eventKind === 2) reachLimit(eventIndex, eventSide);
    else leaveLimit(eventIndex);
  }
  return undefined;

  /**
   * The end point, judged by its own diagnostics: the KKT residual of the shifted problem at x with
   * the multipliers carried along the path (kkt.ts). A near-singular bordered system at a degenerate
   * breakpoint would show here; the caller then re-solves.
   */
  function verified(): Float64Array | undefined {
    const linear = Float64Array.from(problem.linear);
    linear[i] += shift;
    const residual = kktResidual({ ...problem, linear }, x, { budget: nuBudget, groups: nu, bounds: z });
    return residual <= PATH_KKT_TOLERANCE ? x : undefined;
  }

  function hitBound(j: number, side: -1 | 1): void {
    assetState[j] = side;
    x[j] = side < 0 ? lower[j] : upper[j];
    z[j] = 0;
    if (!removeBorder((b) => b.kind === 'release' && b.k === j)) addBorder({ kind: 'fix', j });
  }
  function leaveBound(j: number): void {
    assetState[j] = 0;
    z[j] = 0;
    if (!removeBorder((b) => b.kind === 'fix' && b.j === j)) addBorder({ kind: 'release', k: j });
  }
  function reachLimit(k: number, side: -1 | 1): void {
    groupState[k] = side;
    nu[k] = 0;
    const a = baseRowOf.get(k);
    if (!(a !== undefined && removeBorder((b) => b.kind === 'drop-row' && b.a === a))) addBorder({ kind: 'add-row', g: k });
  }
  function leaveLimit(k: number): void {
    groupState[k] = 0;
    nu[k] = 0;
    if (!removeBorder((b) => b.kind === 'add-row' && b.g === k)) {
      const a = baseRowOf.get(k);
      if (a === undefined) throw new Error('an active group without a base row or an added row');
      addBorder({ kind: 'drop-row', a });
    }
  }
}
