import { Matrix, pseudoInverse } from 'ml-matrix';
import type { QpHessian, QpMultipliers, QpProblem } from './qp-types.js';

/**
 * Karush–Kuhn–Tucker conditions of the QP (Nocedal & Wright, Numerical Optimization 2nd ed.,
 * Theorem 12.1 / §16.1), written independently of the solver so tests can audit it:
 *
 *   stationarity      Hx − c − ν·1 − Σ_g ν_g·1_g − z = 0
 *   primal            lower ≤ x ≤ upper, Σx = budget, min_g ≤ Σ_{i∈g} x_i ≤ max_g
 *   dual sign         z_i ≥ 0 may only push up from a lower bound, z_i ≤ 0 down from an upper
 *                     bound; ν_g ≥ 0 at a group minimum, ≤ 0 at a maximum
 *   complementarity   z_i·(x_i − l_i) = 0 for z_i > 0, z_i·(u_i − x_i) = 0 for z_i < 0; same for groups.
 *
 * Residuals are scaled so that 1e-9 means "correct to about nine digits": stationarity and dual
 * sign by G = max(‖c‖∞, ‖Hx‖∞, h·W) with h = max_i H_ii (for a positive semi-definite H the
 * largest entry in magnitude); primal by W = max(1, |budget|, ‖x‖∞); complementarity by G·W.
 * The h·W term is the normwise scale of a backward error, residual / (‖H‖‖x‖ + ‖c‖) (Rigal &
 * Gaches 1967; Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, §7.1): the
 * gradient Hx cannot be known better than about ε·h·W, because x itself is only known to ε·W.
 * Without it, a riskless optimum (wᵀΣw = 0, e.g. all in a constant-return asset) has Hx ≈ 0 and
 * c = 0, so G would be the rounding noise itself and the residual of a correct answer about 1.
 */
export interface KktReport {
  readonly stationarity: number;
  readonly primalFeasibility: number;
  readonly dualFeasibility: number;
  readonly complementarity: number;
  /** The largest of the four. */
  readonly max: number;
  readonly gradientScale: number;
  readonly weightScale: number;
}

/**
 * Scratch vectors of this module, one per slot, reused while the length stays the same: the KKT
 * check runs after every solve of every draw, so it must not allocate per call. A slot is used by
 * one function only, and none of these functions calls itself or another user of its slot.
 */
const scratchVectors: Float64Array[] = [];
const SLOT = { factorLoad: 0, factorTimes: 1, hessianX: 2, residual: 3 } as const;

function scratch(slot: number, n: number): Float64Array {
  let v = scratchVectors[slot];
  if (v === undefined || v.length !== n) scratchVectors[slot] = v = new Float64Array(n);
  return v;
}

/** out ← H x (dense: scale·M x; factor: λ_f·B(F(Bᵀx)) + λ_s·D x). */
export function hessianTimes(h: QpHessian, x: Float64Array, out: Float64Array): Float64Array {
  if (h.kind === 'dense') {
    const { n, matrix } = h;
    const scale = h.scale ?? 1;
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += matrix[i * n + j] * x[j];
      out[i] = scale * s;
    }
    return out;
  }
  const { n, k, loadings: b, factorCov: f, specificVar: d } = h.model;
  const bx = scratch(SLOT.factorLoad, k).fill(0);
  for (let i = 0; i < n; i++) for (let a = 0; a < k; a++) bx[a] += b[i * k + a] * x[i];
  const fbx = scratch(SLOT.factorTimes, k);
  for (let a = 0; a < k; a++) {
    let s = 0;
    for (let c = 0; c < k; c++) s += f[a * k + c] * bx[c];
    fbx[a] = h.factorScale * s;
  }
  for (let i = 0; i < n; i++) {
    let s = h.specificScale * d[i] * x[i];
    for (let a = 0; a < k; a++) s += b[i * k + a] * fbx[a];
    out[i] = s;
  }
  return out;
}

/** max_i H_ii: the largest diagonal entry (dense: scale·M_ii; factor: λ_f·B_iFB_iᵀ + λ_s·d_i). */
export function hessianDiagonalMax(h: QpHessian): number {
  let largest = 0;
  if (h.kind === 'dense') {
    const scale = h.scale ?? 1;
    for (let i = 0; i < h.n; i++) largest = Math.max(largest, Math.abs(scale * h.matrix[i * h.n + i]));
    return largest;
  }
  const { n, k, loadings: b, factorCov: f, specificVar: d } = h.model;
  for (let i = 0; i < n; i++) {
    let quadratic = 0;
    for (let a = 0; a < k; a++) {
      let s = 0;
      for (let c = 0; c < k; c++) s += f[a * k + c] * b[i * k + c];
      quadratic += b[i * k + a] * s;
    }
    largest = Math.max(largest, Math.abs(h.factorScale * quadratic + h.specificScale * d[i]));
  }
  return largest;
}

/** ½xᵀHx − cᵀx. */
export function qpObjective(problem: QpProblem, x: Float64Array): number {
  const hx = hessianTimes(problem.hessian, x, scratch(SLOT.hessianX, x.length));
  let f = 0;
  for (let i = 0; i < x.length; i++) f += x[i] * (0.5 * hx[i] - problem.linear[i]);
  return f;
}

/** All four KKT residuals at (x, multipliers). */
export function kktReport(problem: QpProblem, x: Float64Array, multipliers: QpMultipliers): KktReport {
  const { constraints, linear } = problem;
  const { n, lower, upper, budget, groups } = constraints;
  const hx = hessianTimes(problem.hessian, x, scratch(SLOT.hessianX, n));
  let gradientScale = 0;
  let weightScale = Math.max(1, Math.abs(budget));
  for (let i = 0; i < n; i++) {
    gradientScale = Math.max(gradientScale, Math.abs(linear[i]), Math.abs(hx[i]));
    weightScale = Math.max(weightScale, Math.abs(x[i]));
  }
  gradientScale = Math.max(gradientScale, hessianDiagonalMax(problem.hessian) * weightScale);
  if (!(gradientScale > 0)) gradientScale = 1;

  // Stationarity: r = Hx − c − ν1 − Σ ν_g 1_g − z.
  const r = scratch(SLOT.residual, n);
  for (let i = 0; i < n; i++) r[i] = hx[i] - linear[i] - multipliers.budget - multipliers.bounds[i];
  groups.forEach((g, gi) => {
    const v = multipliers.groups[gi];
    for (let k = 0; k < g.members.length; k++) r[g.members[k]] -= v;
  });
  let stationarity = 0;
  for (let i = 0; i < n; i++) stationarity = Math.max(stationarity, Math.abs(r[i]));

  let primal = 0;
  let dual = 0;
  let comp = 0;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const v = x[i];
    sum += v;
    primal = Math.max(primal, lower[i] - v, v - upper[i]);
    const z = multipliers.bounds[i];
    if (z > 0) {
      if (lower[i] === -Infinity) dual = Math.max(dual, z);
      else comp = Math.max(comp, z * Math.abs(v - lower[i]));
    } else if (z < 0) {
      if (upper[i] === Infinity) dual = Math.max(dual, -z);
      else comp = Math.max(comp, -z * Math.abs(upper[i] - v));
    }
  }
  primal = Math.max(primal, Math.abs(sum - budget));
  groups.forEach((g, gi) => {
    let s = 0;
    for (let k = 0; k < g.members.length; k++) s += x[g.members[k]];
    primal = Math.max(primal, g.min - s, s - g.max);
    const v = multipliers.groups[gi];
    if (v > 0) {
      if (g.min === -Infinity) dual = Math.max(dual, v);
      else comp = Math.max(comp, v * Math.abs(s - g.min));
    } else if (v < 0) {
      if (g.max === Infinity) dual = Math.max(dual, -v);
      else comp = Math.max(comp, -v * Math.abs(g.max - s));
    }
  });
  const report = {
    stationarity: stationarity / gradientScale,
    primalFeasibility: Math.max(0, primal) / weightScale,
    dualFeasibility: dual / gradientScale,
    complementarity: comp / (gradientScale * weightScale),
    gradientScale,
    weightScale,
  };
  return {
    ...report,
    max: Math.max(report.stationarity, report.primalFeasibility, report.dualFeasibility, report.complementarity),
  };
}

/** The largest scaled KKT residual (see kktReport). */
export function kktResidual(problem: QpProblem, x: Float64Array, multipliers: QpMultipliers): number {
  return kktReport(problem, x, multipliers).max;
}

/**
 * Multipliers estimated from x alone, without the solver's working set: constraints within
 * `activeTolerance`·W of a limit count as active, and the multipliers are the sign-constrained
 * least-squares fit of the stationarity equations Hx − c = ν·1 + Σ ν_g 1_g + z (ν free, signs of
 * ν_g and z as their active side requires), solved by the Lawson–Hanson NNLS algorithm (Lawson &
 * Hanson, Solving Least Squares Problems, 1974, ch. 23) with ml-matrix least squares inside. When
 * multipliers satisfying KKT exist — also at degenerate points where they are not unique — this
 * finds a set with zero residual; otherwise the residual shows in kktReport.
 */
export function estimateMultipliers(problem: QpProblem, x: Float64Array, activeTolerance = 1e-9): QpMultipliers {
  const { constraints, linear } = problem;
  const { n, lower, upper, budget, groups } = constraints;
  const hx = hessianTimes(problem.hessian, x, new Float64Array(n));
  let w = Math.max(1, Math.abs(budget));
  for (let i = 0; i < n; i++) w = Math.max(w, Math.abs(x[i]));
  const tol = activeTolerance * w;

  // Columns of the sign-constrained system: each column, its sign, and where its value goes.
  interface Column {
    readonly entries: Float64Array;
    readonly target: { kind: 'budget' } | { kind: 'group'; index: number } | { kind: 'bound'; index: number };
    readonly sign: 1 | -1;
  }
  const columns: Column[] = [];
  const ones = new Float64Array(n).fill(1);
  columns.push({ entries: ones, target: { kind: 'budget' }, sign: 1 }, { entries: ones, target: { kind: 'budget' }, sign: -1 });
  groups.forEach((g, index) => {
    let s = 0;
    for (let k = 0; k < g.members.length; k++) s += x[g.members[k]];
    const atMin = s - g.min <= tol;
    const atMax = g.max - s <= tol;
    if (!atMin && !atMax) return;
    const entries = new Float64Array(n);
    for (let k = 0; k < g.members.length; k++) entries[g.members[k]] = 1;
    if (atMin) columns.push({ entries, target: { kind: 'group', index }, sign: 1 });
    if (atMax) columns.push({ entries, target: { kind: 'group', index }, sign: -1 });
  });
  for (let i = 0; i < n; i++) {
    const atLower = x[i] - lower[i] <= tol;
    const atUpper = upper[i] - x[i] <= tol;
    if (!atLower && !atUpper) continue;
    const entries = new Float64Array(n);
    entries[i] = 1;
    if (atLower) columns.push({ entries, target: { kind: 'bound', index: i }, sign: 1 });
    if (atUpper) columns.push({ entries, target: { kind: 'bound', index: i }, sign: -1 });
  }
  const a = new Matrix(n, columns.length);
  columns.forEach((col, c) => {
    for (let i = 0; i < n; i++) a.set(i, c, col.sign * col.entries[i]);
  });
  const b = Matrix.columnVector(Array.from({ length: n }, (_, i) => hx[i] - linear[i]));
  const y = nonNegativeLeastSquares(a, b);

  let budgetMultiplier = 0;
  const groupMultipliers = new Float64Array(groups.length);
  const bounds = new Float64Array(n);
  columns.forEach((col, c) => {
    const v = col.sign * y[c];
    if (col.target.kind === 'budget') budgetMultiplier += v;
    else if (col.target.kind === 'group') groupMultipliers[col.target.index] += v;
    else bounds[col.target.index] += v;
  });
  return { budget: budgetMultiplier, groups: groupMultipliers, bounds };
}

/** Lawson–Hanson NNLS: argmin ‖A y − b‖ subject to y ≥ 0 (small dense problems). */
function nonNegativeLeastSquares(a: Matrix, b: Matrix): Float64Array {
  const cols = a.columns;
  const y = new Float64Array(cols);
  const passive = new Uint8Array(cols);
  const gradient = (): Float64Array => {
    const r = b.clone().sub(a.mmul(Matrix.columnVector(Array.from(y))));
    return Float64Array.from(a.transpose().mmul(r).to1DArray());
  };
  const scale = Math.max(Number.MIN_VALUE, a.transpose().mmul(b).abs().max());
  const tol = 1e-13 * scale * Math.max(1, a.rows);
  for (let outer = 0; outer < 3 * cols + 10; outer++) {
    const wv = gradient();
    let best = -1;
    for (let j = 0; j < cols; j++) if (!passive[j] && wv[j] > tol && (best < 0 || wv[j] > wv[best])) best = j;
    if (best < 0) break;
    passive[best] = 1;
    for (let inner = 0; inner < 3 * cols + 10; inner++) {
      const index = Array.from({ length: cols }, (_, j) => j).filter((j) => passive[j]);
      const sub = new Matrix(a.rows, index.length);
      index.forEach((j, c) => sub.setColumn(c, a.getColumn(j)));
      const s = pseudoInverse(sub).mmul(b).to1DArray();
      if (s.every((v) => v > 0)) {
        y.fill(0);
        index.forEach((j, c) => (y[j] = s[c]));
        break;
      }
      // Step from y towards s until the first passive value reaches 0, and release it.
      let alpha = 1;
      index.forEach((j, c) => {
        if (s[c] <= 0) alpha = Math.min(alpha, y[j] / (y[j] - s[c]));
      });
      index.forEach((j, c) => {
        y[j] += alpha * (s[c] - y[j]);
        if (y[j] <= 1e-15 * scale) {
          y[j] = 0;
          passive[j] = 0;
        }
      });
    }
  }
  return y;
}
