import { ActiveSetEngine, AT_LOWER, AT_UPPER, FREE, type CoreProblem, type LinearRow } from './qp-active-set.js';
import {
  checkNecessaryFeasibility,
  elasticPhaseOne,
  groupViolation,
  projectOntoBoundsAndBudget,
  projectOntoDisjointGroups,
  weightScale,
} from './qp-feasibility.js';
import {
  DenseReducedHessian,
  FactorReducedHessian,
  factorHessianDiagonalScale,
  type ReducedHessian,
} from './qp-hessian.js';
import type { QpHessian, QpMultipliers, QpProblem, QpRegularisation, QpSolution, QpWarmStart } from './qp-types.js';
import { kktResidual } from './kkt.js';
import { OptimizationError, type ConstraintSet } from './types.js';

export type { QpHessian, QpMultipliers, QpProblem, QpRegularisation, QpSolution, QpWarmStart } from './qp-types.js';

/**
 * The one convex QP solver shared by every quadratic method (and re-solved thousands of times by
 * the stress engine):
 *
 *   minimise ½xᵀHx − cᵀx  s.t.  lower ≤ x ≤ upper,  Σx = budget,  min_g ≤ Σ_{i∈g} x_i ≤ max_g.
 *
 * Method: primal active set (Nocedal & Wright, Numerical Optimization 2nd ed., §16.5), bounds
 * implicit, budget and active group rows explicit through a Schur complement; reduced Hessians by
 * an updated Cholesky factor (dense H) or Woodbury (factor H, never N×N). See qp-active-set.ts.
 *
 * Starting point:
 * - warm start (the previous solve's x and working set): used as is when x is feasible for this
 *   problem — the usual case in the stress loop, where only H and c move — so a solve costs one
 *   factorisation and one or two steps. Working-set members inconsistent with x are dropped.
 * - otherwise phase 1 (qp-feasibility.ts): the projection onto bounds ∩ budget of a guess (the
 *   warm x, or the budget-only optimum of this problem, or an equal split), then the elastic
 *   problem if group limits still fail. Inconsistent constraints throw
 *   OptimizationError('infeasible', reason naming the constraint).
 *
 * Singular Hessians: see QpRegularisation. A direction of zero curvature that lowers the objective
 * and that no constraint stops throws OptimizationError('unbounded').
 */
export interface QpOptions {
  readonly warmStart?: QpWarmStart;
  /** Default max(200, 10·(n + groups)). */
  readonly maxIterations?: number;
  /** Relative dual tolerance (multipliers within tolerance·max(‖c‖∞, ‖Hx‖∞) of the right sign count as right). Default 1e-11. */
  readonly tolerance?: number;
  /** Reusable buffers; pass the same workspace to consecutive solves to avoid allocation. */
  readonly workspace?: QpWorkspace;
  /** Cold-start guess: the budget-only optimum projected onto the bounds (default) or an equal split. */
  readonly coldStart?: 'projected' | 'uniform';
}

export const DEFAULT_QP_TOLERANCE = 1e-11;

/**
 * Buffers reused across solves (resized on demand). The rows built from a ConstraintSet are
 * cached per ConstraintSet object: treat constraint sets as immutable (build a new object to
 * change groups or the budget).
 */
export class QpWorkspace {
  readonly engine = new ActiveSetEngine();
  /** Separate engine for the elastic feasibility problem (its own sizes). */
  readonly phaseOneEngine = new ActiveSetEngine();
  private n = -1;
  private groupCount = -1;
  x = new Float64Array(0);
  varState = new Int8Array(0);
  rowState = new Int8Array(0);
  rowMultipliers = new Float64Array(0);
  boundMultipliers = new Float64Array(0);
  guess = new Float64Array(0);
  denseFactor = new Float64Array(0);
  denseColumn = new Float64Array(0);
  private rowsFor: ConstraintSet | null = null;
  private rows: LinearRow[] = [];

  constructor(n = 0, groupCount = 0) {
    this.ensure(n, groupCount);
  }

  ensure(n: number, groupCount: number): void {
    if (n !== this.n) {
      this.n = n;
      this.x = new Float64Array(n);
      this.varState = new Int8Array(n);
      this.boundMultipliers = new Float64Array(n);
      this.guess = new Float64Array(n);
      this.denseColumn = new Float64Array(n);
      this.denseFactor = new Float64Array(0);
    }
    if (groupCount !== this.groupCount) {
      this.groupCount = groupCount;
      this.rowState = new Int8Array(groupCount + 1);
      this.rowMultipliers = new Float64Array(groupCount + 1);
    }
    this.engine.ensureCapacity(n, groupCount + 1);
  }

  denseFactorBuffer(n: number): Float64Array {
    if (this.denseFactor.length < n * n) this.denseFactor = new Float64Array(n * n);
    return this.denseFactor;
  }

  /** Row 0 is the budget, row 1 + g is group g (cached per ConstraintSet object). */
  rowsOf(constraints: ConstraintSet): LinearRow[] {
    if (this.rowsFor !== constraints) {
      this.rows = buildRows(constraints);
      this.rowsFor = constraints;
    }
    return this.rows;
  }
}

/** Solves the QP; see the module comment. */
export function solveQp(problem: QpProblem, options: QpOptions = {}): QpSolution {
  const { constraints, linear } = problem;
  const n = constraints.n;
  validateProblem(problem);
  checkNecessaryFeasibility(constraints);
  const groupCount = constraints.groups.length;
  const ws = options.workspace ?? new QpWorkspace(n, groupCount);
  ws.ensure(n, groupCount);
  const rows = ws.rowsOf(constraints);
  const { hessian, form } = buildReducedHessian(problem.hessian, n, ws);
  const core: CoreProblem = { n, lower: constraints.lower, upper: constraints.upper, linear, rows, hessian, budgetRow: 0 };
  const maxIterations = options.maxIterations ?? Math.max(200, 10 * (n + groupCount));
  const tolerance = options.tolerance ?? DEFAULT_QP_TOLERANCE;

  const x = ws.x;
  const varState = ws.varState;
  const rowState = ws.rowState;
  let phase1Iterations = 0;
  const warm = compatibleWarmStart(options.warmStart, n, groupCount);
  if (warm && isFeasible(constraints, warm.x)) {
    x.set(warm.x);
    varState.set(warm.assetState);
    rowState[0] = AT_LOWER;
    rowState.set(warm.groupState, 1);
  } else {
    const guess = ws.guess;
    if (warm) guess.set(warm.x);
    else coldGuess(problem, hessian, options.coldStart ?? 'projected', guess);
    projectOntoBoundsAndBudget(guess, constraints.lower, constraints.upper, constraints.budget, x);
    markBounds(constraints, x, varState);
    rowState.fill(FREE);
    rowState[0] = AT_LOWER;
    // Group hints from the warm working set; the engine keeps only those tight at x.
    if (warm) rowState.set(warm.groupState, 1);
    if (groupCount > 0 && groupViolation(constraints, x) > 0) {
      if (projectOntoDisjointGroups(constraints, guess, x) && groupViolation(constraints, x) <= 1e-12 * weightScale(constraints)) {
        markBounds(constraints, x, varState);
      } else {
        const groupHints = new Int8Array(groupCount);
        phase1Iterations = elasticPhaseOne(constraints, x, varState, groupHints, maxIterations, ws.phaseOneEngine).iterations;
        rowState.set(groupHints, 1);
      }
    }
  }

  const outcome = ws.engine.run(core, x, varState, rowState, ws.rowMultipliers, ws.boundMultipliers, {
    maxIterations,
    tolerance,
  });

  const solutionX = Float64Array.from(x);
  const multipliers: QpMultipliers = {
    budget: ws.rowMultipliers[0],
    groups: Float64Array.from(ws.rowMultipliers.subarray(1, 1 + groupCount)),
    bounds: Float64Array.from(ws.boundMultipliers),
  };
  const hx = ws.guess;
  hessian.multiply(solutionX, hx);
  let objective = 0;
  for (let i = 0; i < n; i++) objective += solutionX[i] * (0.5 * hx[i] - linear[i]);
  const regularisation: QpRegularisation = outcome.level === 0 ? 'none' : outcome.level === 1 ? 'augmented' : 'ridge';
  return {
    x: solutionX,
    objective,
    iterations: outcome.iterations,
    phase1Iterations,
    converged: outcome.converged,
    kktResidual: kktResidual(problem, solutionX, multipliers),
    multipliers,
    warmStart: {
      x: Float64Array.from(solutionX),
      assetState: Int8Array.from(varState),
      groupState: Int8Array.from(rowState.subarray(1, 1 + groupCount)),
    },
    regularisation,
    ridge: outcome.ridge,
    hessianForm: form,
  };
}

/** Variables sitting exactly on a bound start in the working set. */
function markBounds(constraints: ConstraintSet, x: Float64Array, varState: Int8Array): void {
  for (let i = 0; i < constraints.n; i++) {
    varState[i] = x[i] === constraints.lower[i] ? AT_LOWER : x[i] === constraints.upper[i] ? AT_UPPER : FREE;
  }
}

/** True when `value` has the shape of a QpWarmStart (methods receive warm starts as `unknown`). */
export function isQpWarmStart(value: unknown): value is QpWarmStart {
  if (typeof value !== 'object' || value === null) return false;
  const v = value as Partial<Record<keyof QpWarmStart, unknown>>;
  return v.x instanceof Float64Array && v.assetState instanceof Int8Array && v.groupState instanceof Int8Array;
}

function compatibleWarmStart(warm: QpWarmStart | undefined, n: number, groupCount: number): QpWarmStart | undefined {
  if (!warm || !isQpWarmStart(warm)) return undefined;
  if (warm.x.length !== n || warm.assetState.length !== n || warm.groupState.length !== groupCount) return undefined;
  for (let i = 0; i < n; i++) if (!Number.isFinite(warm.x[i])) return undefined;
  return warm;
}

/** Feasible to rounding: bounds exactly (after snapping), budget and groups within 1e-12 of scale. */
function isFeasible(constraints: ConstraintSet, x: Float64Array): boolean {
  const tol = 1e-12 * weightScale(constraints);
  let s = 0;
  for (let i = 0; i < constraints.n; i++) {
    const v = x[i];
    if (v < constraints.lower[i] - tol || v > constraints.upper[i] + tol) return false;
    s += v;
  }
  if (Math.abs(s - constraints.budget) > tol) return false;
  return groupViolation(constraints, x) <= tol;
}

/**
 * The budget-only optimum x̂ = H⁻¹(c + ν1), ν = (budget − 1ᵀH⁻¹c)/(1ᵀH⁻¹1), when H (or H + ρ11ᵀ,
 * which has the same minimiser on the budget hyperplane) factors; otherwise an equal split.
 */
function coldGuess(problem: QpProblem, hessian: ReducedHessian, mode: 'projected' | 'uniform', out: Float64Array): void {
  const { n, budget } = problem.constraints;
  out.fill(budget / n);
  if (mode === 'uniform') return;
  const all = new Int32Array(n);
  for (let i = 0; i < n; i++) all[i] = i;
  const ones = new Float64Array(n).fill(1);
  const budgetOnly = { dense: [ones], active: Int32Array.of(0), count: 1 };
  let ok = false;
  for (const level of [0, 1] as const) {
    hessian.setLevel(level);
    if (hessian.factorize(all, n, budgetOnly)) {
      ok = true;
      break;
    }
  }
  if (!ok) return;
  const hc = new Float64Array(n);
  const h1 = new Float64Array(n);
  hessian.solve(problem.linear, hc, all, n);
  hessian.solve(ones, h1, all, n);
  let s1 = 0;
  let sc = 0;
  for (let i = 0; i < n; i++) {
    s1 += h1[i];
    sc += hc[i];
  }
  if (!(s1 > 0) || !Number.isFinite(sc)) return;
  const nu = (budget - sc) / s1;
  for (let i = 0; i < n; i++) out[i] = hc[i] + nu * h1[i];
  for (let i = 0; i < n; i++) if (!Number.isFinite(out[i])) return void out.fill(budget / n);
}

export function buildReducedHessian(
  h: QpHessian,
  n: number,
  ws: QpWorkspace,
): { hessian: ReducedHessian; form: QpSolution['hessianForm'] } {
  if (h.kind === 'dense') {
    return { hessian: new DenseReducedHessian(n, h.matrix, h.scale ?? 1, ws.denseFactorBuffer(n), ws.denseColumn), form: 'dense' };
  }
  const { model, factorScale, specificScale } = h;
  // Woodbury needs a positive diagonal; with (numerically) zero specific risk expand to dense.
  const scale = factorHessianDiagonalScale(model, factorScale, specificScale);
  let minSpecific = Infinity;
  for (let i = 0; i < n; i++) minSpecific = Math.min(minSpecific, specificScale * model.specificVar[i]);
  if (minSpecific > 1e-10 * scale) return { hessian: new FactorReducedHessian(model, factorScale, specificScale), form: 'factor' };
  return {
    hessian: new DenseReducedHessian(n, expandFactorHessian(h), 1, ws.denseFactorBuffer(n), ws.denseColumn),
    form: 'factor-expanded',
  };
}

/** λ_f·BFBᵀ + λ_s·D as a dense n×n matrix (fallback only). */
export function expandFactorHessian(h: Extract<QpHessian, { kind: 'factor' }>): Float64Array {
  const { n, k, loadings: b, factorCov: f, specificVar: d } = h.model;
  const bf = new Float64Array(n * k);
  for (let i = 0; i < n; i++) {
    for (let a = 0; a < k; a++) {
      let s = 0;
      for (let c = 0; c < k; c++) s += b[i * k + c] * f[c * k + a];
      bf[i * k + a] = s;
    }
  }
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let a = 0; a < k; a++) s += bf[i * k + a] * b[j * k + a];
      s *= h.factorScale;
      if (i === j) s += h.specificScale * d[i];
      out[i * n + j] = s;
      out[j * n + i] = s;
    }
  }
  return out;
}

function buildRows(constraints: ConstraintSet): LinearRow[] {
  const { n, budget, groups } = constraints;
  const idx = new Int32Array(n);
  for (let i = 0; i < n; i++) idx[i] = i;
  const rows: LinearRow[] = [{ idx, coef: new Float64Array(n).fill(1), lo: budget, hi: budget }];
  for (const g of groups) {
    rows.push({ idx: Int32Array.from(g.members), coef: new Float64Array(g.members.length).fill(1), lo: g.min, hi: g.max });
  }
  return rows;
}

function validateProblem(problem: QpProblem): void {
  const { constraints, linear, hessian } = problem;
  const n = constraints.n;
  if (!(n >= 1)) throw new OptimizationError('invalid-input', 'the problem needs at least one asset');
  if (linear.length !== n || constraints.lower.length !== n || constraints.upper.length !== n) {
    throw new OptimizationError('invalid-input', `vector lengths do not match the ${n} assets`);
  }
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(linear[i])) throw new OptimizationError('invalid-input', `linear term ${i} is not finite`);
  }
  if (hessian.kind === 'dense') {
    if (hessian.n !== n || hessian.matrix.length !== n * n) {
      throw new OptimizationError('invalid-input', `the Hessian is not ${n}×${n}`);
    }
    const scale = hessian.scale ?? 1;
    if (!(scale >= 0) || !Number.isFinite(scale)) throw new OptimizationError('invalid-input', `Hessian scale must be ≥ 0, got ${scale}`);
    for (let i = 0; i < n * n; i++) {
      if (!Number.isFinite(hessian.matrix[i])) throw new OptimizationError('invalid-input', 'the Hessian has a non-finite entry');
    }
  } else {
    const { model, factorScale, specificScale } = hessian;
    if (model.n !== n) throw new OptimizationError('invalid-input', `the factor model has ${model.n} assets, not ${n}`);
    if (!(factorScale >= 0) || !(specificScale >= 0) || !Number.isFinite(factorScale) || !Number.isFinite(specificScale)) {
      throw new OptimizationError('invalid-input', 'factor and specific risk scales must be finite and ≥ 0');
    }
    for (let i = 0; i < n; i++) {
      if (!(model.specificVar[i] >= 0)) throw new OptimizationError('invalid-input', `specific variance ${i} must be ≥ 0`);
    }
  }
}
