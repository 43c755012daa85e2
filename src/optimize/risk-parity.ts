import { choleskyDecompose, choleskySolveInPlace } from '../linalg/dense.js';
import { factorSquareRoot } from '../linalg/factor-solve.js';
import type { FactorRiskModel, RiskModel } from '../linalg/risk-model.js';
import { assetVariances, covTimes } from '../linalg/risk-ops.js';
import { constraintsNotAppliedWarnings } from './constraint-check.js';
import type { ConstraintSet, MethodResult } from './types.js';
import { firstNearZeroVariance, nearZeroVarianceMessage } from './degenerate.js';
import { OptimizationError } from './types.js';

/**
 * Risk parity / risk budgeting (Maillard, Roncalli & Teïletche 2010, J. Portfolio Management
 * 36(4)): long-only weights, budget 1, whose Euler risk contributions w_i(Σw)_i/σ(w) are the
 * fractions b_i of total risk (b_i = 1/N for equal risk contribution).
 *
 * Both solvers work on the scaled variable x (w = x/Σx) at which x∘(Σx) = b holds exactly:
 * - Newton's method on Spinu's (2013, SSRN 2297383) strictly convex objective
 *   f(x) = ½xᵀΣx − Σ b_i ln x_i, whose gradient Σx − b/x vanishes exactly there. The Hessian
 *   Σ + diag(b/x²) is dense + diagonal, or for a factor model BFBᵀ + diagonal, which Woodbury
 *   solves in O(NK²) without forming N×N.
 * - Cyclical coordinate descent (Griveau-Billion, Richard & Roncalli 2013, arXiv:1311.4057):
 *   x_i ← (−β_i + √(β_i² + 4σ_i² b_i σ(x)))/(2σ_i²), β_i = (Σx)_i − σ_i² x_i, whose fixed point
 *   x∘(Σx) = b·σ(x) forces σ(x) = 1 when Σb = 1 (sum the equations), i.e. the same x. Used as a
 *   fallback when Newton fails, and as the first choice for large dense Σ, where a sweep
 *   costs O(N²) against Newton's O(N³) factorisation; a factor model's sweep costs O(NK).
 * The returned KKT residual is max_i |x_i(Σx)_i − b_i|, recomputed from scratch at the end. It
 * must be ≤ 1e-10, unless cancellation in Σx makes that unverifiable in double precision (see
 * residualRoundingFloor): then the result is accepted with an 'ill-conditioned' warning.
 */

/** Residual accepted as converged: x∘(Σx) = b verified to this absolute accuracy. */
export const RISK_PARITY_ACCEPT_TOLERANCE = 1e-10;
/**
 * Largest residual max|x_i(Σx)_i − b_i| that cancellation in Σx may excuse (accepted with an
 * 'ill-conditioned' warning). Budgets sum to 1, so 1e-8 leaves every risk contribution within a
 * millionth of a percentage point of its budget.
 */
export const RISK_PARITY_ILL_CONDITIONED_MAX = 1e-8;
/**
 * A long-only portfolio whose variance is below this share of (Σ w_i σ_i)² is "riskless": the
 * assets in it hedge each other (almost) perfectly.
 */
const ZERO_RISK_SHARE = 1e-12;
/** Residual the solvers aim for before stopping (well inside the accepted one). */
export const RISK_PARITY_TARGET_TOLERANCE = 1e-12;
/**
 * Above this size a dense Σ is solved by coordinate descent first: a sweep costs O(N²) against
 * O(N³) per Newton step (measured here: N = 400, 12 Newton steps ≈ 300 ms vs 21 sweeps ≈ 15 ms).
 */
export const DENSE_NEWTON_MAX_N = 100;
/** Largest dense N for which a failed coordinate descent is polished by Newton (O(N³) per step). */
export const DENSE_NEWTON_FALLBACK_MAX_N = 1000;

/** Scaled Newton decrement below which full Newton steps are taken (quadratic phase, Boyd & Vandenberghe 2004, §9.6). */
const LOCAL_PHASE_DECREMENT = 0.25;

export type RiskParitySolver = 'newton' | 'coordinate-descent';

/** What a solve leaves for the next nearby one: the scaled solution x with x∘(Σx) ≈ b. */
export interface RiskParityWarmStart {
  readonly kind: 'risk-parity';
  readonly x: Float64Array;
}

export interface RiskParityOptions {
  /** Risk budgets b: positive, any scale (normalised to sum 1). Default: equal (ERC). */
  readonly budgets?: ArrayLike<number>;
  /**
   * A previous result's `warmStart`, or any positive weight vector. Rescaled along its ray to
   * the best multiple (x = w/σ(w), where f is smallest on that ray) before the first step.
   */
  readonly warmStart?: unknown;
  /** Force the first solver; default Newton, except coordinate descent for dense N > DENSE_NEWTON_MAX_N. */
  readonly solver?: RiskParitySolver;
  /** Target residual (default RISK_PARITY_TARGET_TOLERANCE). */
  readonly tolerance?: number;
  readonly maxNewtonIterations?: number;
  readonly maxSweeps?: number;
  /** The caller's constraints: not applied (risk parity is long-only, budget 1), only reported. */
  readonly constraints?: ConstraintSet;
  readonly assetNames?: readonly string[];
  /** Reusable buffers for repeated solves on models of the same shape (stress loop). */
  readonly workspace?: RiskParityWorkspace;
}

export interface RiskParityDetails {
  readonly newtonIterations: number;
  readonly coordinateSweeps: number;
  /** max_i |x_i(Σx)_i − b_i| at the returned point. */
  readonly residual: number;
  /** Whether the first solver stopped short and handed over to the other one. */
  readonly fellBack: boolean;
  readonly warmStarted: boolean;
  /** Normalised budgets used. */
  readonly budgets: Float64Array;
}

export interface RiskParityResult extends MethodResult {
  readonly warmStart: RiskParityWarmStart;
  readonly details: RiskParityDetails;
}

/** Checks and normalises risk budgets: n finite positive numbers, scaled to sum to 1. */
export function normaliseRiskBudgets(budgets: ArrayLike<number> | undefined, n: number, out: Float64Array = new Float64Array(n)): Float64Array {
  if (budgets === undefined) return out.fill(1 / n);
  if (budgets.length !== n) throw new OptimizationError('invalid-input', `risk budgets have length ${budgets.length}, expected ${n}`);
  let total = 0;
  for (let i = 0; i < n; i++) {
    const b = budgets[i];
    if (!Number.isFinite(b) || !(b > 0)) {
      throw new OptimizationError('invalid-input', `risk budget ${i} must be a positive finite number, got ${b}`);
    }
    total += b;
  }
  for (let i = 0; i < n; i++) out[i] = budgets[i] / total;
  return out;
}

/** Type guard for a warm start produced by this module. */
export function isRiskParityWarmStart(value: unknown): value is RiskParityWarmStart {
  return typeof value === 'object' && value !== null && (value as { kind?: unknown }).kind === 'risk-parity' &&
    (value as { x?: unknown }).x instanceof Float64Array;
}

/** Buffers sized for one model shape; reuse across solves to keep the stress loop allocation-light. */
export class RiskParityWorkspace {
  readonly n: number;
  readonly k: number;
  readonly b: Float64Array;
  readonly x: Float64Array;
  readonly s: Float64Array; // Σx
  readonly xTrial: Float64Array;
  readonly sTrial: Float64Array;
  readonly grad: Float64Array;
  readonly step: Float64Array;
  readonly variances: Float64Array;
  readonly best: Float64Array;
  readonly scratchK: Float64Array; // covTimes scratch, 2k
  // Factor model (Woodbury Newton / coordinate descent); length 0 for dense.
  readonly scaledLoadings: Float64Array; // C = B·R, n×k with R Rᵀ = F
  readonly loadingsTimesF: Float64Array; // G = B·F, n×k
  readonly capacitance: Float64Array; // I + Cᵀ E⁻¹ C, k×k
  readonly vecK: Float64Array; // k
  readonly vecK2: Float64Array; // k
  /** Rounding bound of the last objective evaluation. */
  objectiveRoundoff = 0;
  private denseHessian: Float64Array | undefined; // n×n, allocated on first dense Newton solve

  constructor(n: number, k = 0) {
    this.n = n;
    this.k = k;
    this.b = new Float64Array(n);
    this.x = new Float64Array(n);
    this.s = new Float64Array(n);
    this.xTrial = new Float64Array(n);
    this.sTrial = new Float64Array(n);
    this.grad = new Float64Array(n);
    this.step = new Float64Array(n);
    this.variances = new Float64Array(n);
    this.best = new Float64Array(n);
    this.scratchK = new Float64Array(Math.max(2 * k, 2));
    this.scaledLoadings = new Float64Array(n * k);
    this.loadingsTimesF = new Float64Array(n * k);
    this.capacitance = new Float64Array(k * k);
    this.vecK = new Float64Array(k);
    this.vecK2 = new Float64Array(k);
  }

  hessian(): Float64Array {
    if (this.denseHessian === undefined) this.denseHessian = new Float64Array(this.n * this.n);
    return this.denseHessian;
  }

  fits(model: RiskModel): boolean {
    return model.n === this.n && (model.kind === 'dense' ? true : model.k === this.k);
  }
}

export function createRiskParityWorkspace(model: RiskModel): RiskParityWorkspace {
  return new RiskParityWorkspace(model.n, model.kind === 'factor' ? model.k : 0);
}

/** max_i |x_i s_i − b_i| for s = Σx already computed. */
function residualFrom(x: Float64Array, s: Float64Array, b: Float64Array): number {
  let r = 0;
  for (let i = 0; i < x.length; i++) {
    const e = Math.abs(x[i] * s[i] - b[i]);
    if (e > r || Number.isNaN(e)) r = Number.isNaN(e) ? Infinity : e;
  }
  return r;
}

/**
 * max_i |x_i(Σx)_i − b_i|: how far x is from the risk-budgeting condition (Spinu 2013).
 * `scratchN` (length n) and `scratchK` (length 2k) avoid allocation.
 */
export function riskBudgetResidual(
  model: RiskModel,
  x: Float64Array,
  budgets: Float64Array,
  scratchN: Float64Array = new Float64Array(model.n),
  scratchK?: Float64Array,
): number {
  covTimes(model, x, scratchN, scratchK);
  return residualFrom(x, scratchN, budgets);
}

/**
 * Spinu's objective ½xᵀs − Σ b_i ln x_i with s = Σx. A bound on its rounding error goes to
 * ws.objectiveRoundoff (no allocation in the line search).
 */
function spinuObjective(x: Float64Array, s: Float64Array, b: Float64Array, ws: RiskParityWorkspace): number {
  let quad = 0;
  let logs = 0;
  let scale = 0;
  for (let i = 0; i < x.length; i++) {
    quad += x[i] * s[i];
    const l = b[i] * Math.log(x[i]);
    logs += l;
    scale += Math.abs(x[i] * s[i]) + Math.abs(l);
  }
  ws.objectiveRoundoff = 64 * Number.EPSILON * (scale + 1);
  return 0.5 * quad - logs;
}

/** x ← t·x with t = 1/√(xᵀΣx): the minimiser of Spinu's objective along the ray through x when Σb = 1. */
function rescaleToRay(model: RiskModel, x: Float64Array, s: Float64Array, scratchK: Float64Array): boolean {
  covTimes(model, x, s, scratchK);
  let q = 0;
  for (let i = 0; i < x.length; i++) q += x[i] * s[i];
  if (!(q > 0) || !Number.isFinite(q)) return false;
  const t = 1 / Math.sqrt(q);
  for (let i = 0; i < x.length; i++) {
    x[i] *= t;
    s[i] *= t;
  }
  return true;
}

// ---------------------------------------------------------------------------------------------
// Newton on Spinu's objective.

/**
 * Precomputes C = B·R with R Rᵀ = F (Cholesky, or an eigen square root when F is only positive
 * semi-definite) for the Woodbury solves. False when F is not positive semi-definite.
 */
function prepareFactorNewton(model: FactorRiskModel, ws: RiskParityWorkspace): boolean {
  const { n, k } = model;
  let root: Float64Array;
  try {
    root = factorSquareRoot(model.factorCov, k, 1);
  } catch {
    return false;
  }
  const B = model.loadings;
  const C = ws.scaledLoadings;
  for (let i = 0; i < n; i++) {
    for (let a = 0; a < k; a++) {
      let v = 0;
      for (let c = 0; c < k; c++) v += B[i * k + c] * root[c * k + a];
      C[i * k + a] = v;
    }
  }
  return true;
}

/**
 * step ← −(BFBᵀ + E)⁻¹ grad with E = diag(d + b/x²), by Woodbury on C = B·R (R Rᵀ = F):
 * (CCᵀ + E)⁻¹ = E⁻¹ − E⁻¹C(I + CᵀE⁻¹C)⁻¹CᵀE⁻¹. The capacitance matrix has eigenvalues ≥ 1,
 * so it is always well conditioned. O(NK²).
 */
function factorNewtonStep(model: FactorRiskModel, ws: RiskParityWorkspace): boolean {
  const { n, k } = model;
  const C = ws.scaledLoadings;
  const M = ws.capacitance;
  const t = ws.vecK;
  const x = ws.x;
  const b = ws.b;
  const g = ws.grad;
  const step = ws.step;
  M.fill(0);
  t.fill(0);
  for (let i = 0; i < n; i++) {
    const eInv = 1 / (model.specificVar[i] + b[i] / (x[i] * x[i]));
    step[i] = eInv; // E⁻¹ kept here temporarily
    const row = i * k;
    const ge = g[i] * eInv;
    for (let a = 0; a < k; a++) {
      const ca = C[row + a] * eInv;
      t[a] += C[row + a] * ge;
      for (let c = 0; c <= a; c++) M[a * k + c] += ca * C[row + c];
    }
  }
  for (let a = 0; a < k; a++) {
    M[a * k + a] += 1;
    for (let c = 0; c < a; c++) M[c * k + a] = M[a * k + c];
  }
  if (choleskyDecompose(M, k) >= 0) return false;
  choleskySolveInPlace(M, k, t); // t = (I + CᵀE⁻¹C)⁻¹ CᵀE⁻¹ g
  for (let i = 0; i < n; i++) {
    const row = i * k;
    let ct = 0;
    for (let a = 0; a < k; a++) ct += C[row + a] * t[a];
    step[i] = -step[i] * (g[i] - ct);
  }
  return true;
}

/** step ← −(Σ + diag(b/x²))⁻¹ grad by a dense Cholesky. O(N³). */
function denseNewtonStep(cov: Float64Array, ws: RiskParityWorkspace): boolean {
  const n = ws.n;
  const H = ws.hessian();
  H.set(cov);
  for (let i = 0; i < n; i++) H[i * n + i] += ws.b[i] / (ws.x[i] * ws.x[i]);
  if (choleskyDecompose(H, n) >= 0) return false;
  for (let i = 0; i < n; i++) ws.step[i] = -ws.grad[i];
  choleskySolveInPlace(H, n, ws.step);
  return true;
}

/**
 * Size of the rounding error in evaluating x_i(Σx)_i: 4ε·max_i x_i(|Σ||x|)_i. When Σx cancels
 * heavily (near-singular Σ, volatilities orders of magnitude apart) no double-precision method
 * can verify x∘(Σx) = b more tightly than this. |Σ| is bounded for a factor model by
 * |B||F||B|ᵀ + D, in O(NK). Uses `out` (length n) as scratch.
 */
export function residualRoundingFloor(model: RiskModel, x: Float64Array, out: Float64Array, scratchK: Float64Array): number {
  const n = model.n;
  if (model.kind === 'dense') {
    for (let i = 0; i < n; i++) {
      let v = 0;
      for (let j = 0; j < n; j++) v += Math.abs(model.cov[i * n + j] * x[j]);
      out[i] = v;
    }
  } else {
    const k = model.k;
    const B = model.loadings;
    for (let a = 0; a < 2 * k; a++) scratchK[a] = 0;
    for (let i = 0; i < n; i++) for (let a = 0; a < k; a++) scratchK[a] += Math.abs(B[i * k + a] * x[i]);
    for (let a = 0; a < k; a++) {
      let v = 0;
      for (let c = 0; c < k; c++) v += Math.abs(model.factorCov[a * k + c]) * scratchK[c];
      scratchK[k + a] = v;
    }
    for (let i = 0; i < n; i++) {
      let v = Math.abs(model.specificVar[i] * x[i]);
      for (let a = 0; a < k; a++) v += Math.abs(B[i * k + a]) * scratchK[k + a];
      out[i] = v;
    }
  }
  let floor = 0;
  for (let i = 0; i < n; i++) floor = Math.max(floor, Math.abs(x[i]) * out[i]);
  return 4 * Number.EPSILON * floor;
}

/** Converged: residual within RISK_PARITY_ACCEPT_TOLERANCE, or within the rounding floor when that is larger. */
function accepted(model: RiskModel, ws: RiskParityWorkspace, residual: number): boolean {
  if (!Number.isFinite(residual)) return false;
  if (residual <= RISK_PARITY_ACCEPT_TOLERANCE) return true;
  return residual <= residualRoundingFloor(model, ws.x, ws.sTrial, ws.scratchK);
}

interface SolverOutcome {
  iterations: number;
  residual: number;
  ok: boolean;
}

/**
 * Newton on Spinu's objective: backtracking (Armijo) steps that keep x > 0 while far from the
 * solution (convexity makes every Newton direction a descent direction), full steps once in the
 * quadratic phase. Starts from ws.x (with ws.s = Σx) and leaves its best iterate there.
 */
function newtonSolve(model: RiskModel, ws: RiskParityWorkspace, tolerance: number, maxIterations: number): SolverOutcome {
  const n = ws.n;
  const { b, grad, step } = ws;
  let minBudget = Infinity;
  for (let i = 0; i < n; i++) minBudget = Math.min(minBudget, b[i]);
  if (model.kind === 'factor' && !prepareFactorNewton(model, ws)) return { iterations: 0, residual: Infinity, ok: false };
  const x = ws.x;
  const s = ws.s;
  let residual = residualFrom(x, s, b);
  let objective = spinuObjective(x, s, b, ws);
  let roundoff = ws.objectiveRoundoff;
  let iterations = 0;
  while (residual > tolerance && iterations < maxIterations) {
    for (let i = 0; i < n; i++) grad[i] = s[i] - b[i] / x[i];
    const solved = model.kind === 'factor' ? factorNewtonStep(model, ws) : denseNewtonStep(model.cov, ws);
    if (!solved) break;
    let slope = 0; // gᵀΔ = −(Newton decrement)²
    for (let i = 0; i < n; i++) slope += grad[i] * step[i];
    if (!(slope <= 0) || !Number.isFinite(slope)) break;
    const xt = ws.xTrial;
    const st = ws.sTrial;
    // f/b_min is self-concordant (each −(b_i/b_min) ln x_i is, the quadratic is convex), with
    // Newton decrement λ̃ = √(−gᵀΔ/b_min). For λ̃ < 1 the full step stays in the domain (Dikin
    // ellipsoid) and for λ̃ ≤ 0.25 Newton is in its quadratically convergent phase (Boyd &
    // Vandenberghe 2004, Convex Optimization, §9.6), so no line search is needed; this matters
    // because there the predicted decrease λ²/2 falls below the rounding error of f and an
    // Armijo test would reject good steps.
    const scaledDecrement = Math.sqrt(-slope / minBudget);
    if (scaledDecrement <= LOCAL_PHASE_DECREMENT) {
      let positive = true;
      for (let i = 0; i < n; i++) {
        xt[i] = x[i] + step[i];
        if (!(xt[i] > 0) || !Number.isFinite(xt[i])) positive = false;
      }
      if (!positive) break;
      covTimes(model, xt, st, ws.scratchK);
      const next = residualFrom(xt, st, b);
      // No gain means rounding now dominates: keep the current (better) point and stop.
      if (!(next < residual)) break;
      iterations++;
      x.set(xt);
      s.set(st);
      objective = spinuObjective(x, s, b, ws);
      roundoff = ws.objectiveRoundoff;
      const stalled = next <= RISK_PARITY_ACCEPT_TOLERANCE && next > 0.5 * residual;
      residual = next;
      if (stalled) break;
      continue;
    }
    // Damped phase: backtracking (Armijo) from the full step, cut back to keep x > 0.
    let t = 1;
    for (let i = 0; i < n; i++) if (step[i] < 0) t = Math.min(t, (-0.99 * x[i]) / step[i]);
    let stepAccepted = false;
    for (let tries = 0; tries < 60 && !stepAccepted; tries++, t *= 0.5) {
      let positive = true;
      for (let i = 0; i < n; i++) {
        xt[i] = x[i] + t * step[i];
        if (!(xt[i] > 0)) positive = false;
      }
      if (!positive) continue;
      covTimes(model, xt, st, ws.scratchK);
      const trial = spinuObjective(xt, st, b, ws);
      // Armijo, with slack for the rounding error of f.
      if (trial <= objective + 1e-4 * t * slope + roundoff) {
        stepAccepted = true;
        objective = trial;
        roundoff = ws.objectiveRoundoff;
      }
    }
    if (!stepAccepted) break;
    iterations++;
    x.set(xt);
    s.set(st);
    residual = residualFrom(x, s, b);
  }
  return { iterations, residual, ok: accepted(model, ws, residual) };
}

// ---------------------------------------------------------------------------------------------
// Cyclical coordinate descent (Griveau-Billion, Richard & Roncalli 2013).

/** Positive root of σ_i² x² + β x − b σ = 0, written to avoid cancellation when β > 0. */
function coordinateRoot(variance: number, beta: number, bSigma: number): number {
  const disc = Math.sqrt(beta * beta + 4 * variance * bSigma);
  return beta > 0 ? (2 * bSigma) / (beta + disc) : (disc - beta) / (2 * variance);
}

function denseSweep(cov: Float64Array, ws: RiskParityWorkspace, sigma2: number): number {
  const n = ws.n;
  const { x, s, b, variances } = ws;
  for (let i = 0; i < n; i++) {
    const vi = variances[i];
    const beta = s[i] - vi * x[i];
    const xi = coordinateRoot(vi, beta, b[i] * Math.sqrt(Math.max(sigma2, 0)));
    const delta = xi - x[i];
    if (delta === 0) continue;
    sigma2 += 2 * delta * s[i] + delta * delta * vi;
    x[i] = xi;
    const row = i * n; // Σ symmetric: column i = row i
    for (let j = 0; j < n; j++) s[j] += delta * cov[row + j];
  }
  return sigma2;
}

/**
 * One sweep for Σ = BFBᵀ + D in O(NK): (Σx)_i = B_i·z + d_i x_i with z = F Bᵀx, and a change δ
 * in x_i moves z by δ·(F B_iᵀ) = δ·G_i (G = B F precomputed).
 */
function factorSweep(model: FactorRiskModel, ws: RiskParityWorkspace, sigma2: number): number {
  const { n, k } = model;
  const { x, b, variances } = ws;
  const B = model.loadings;
  const G = ws.loadingsTimesF;
  const z = ws.vecK;
  for (let i = 0; i < n; i++) {
    const row = i * k;
    let si = model.specificVar[i] * x[i];
    for (let a = 0; a < k; a++) si += B[row + a] * z[a];
    const vi = variances[i];
    const beta = si - vi * x[i];
    const xi = coordinateRoot(vi, beta, b[i] * Math.sqrt(Math.max(sigma2, 0)));
    const delta = xi - x[i];
    if (delta === 0) continue;
    sigma2 += 2 * delta * si + delta * delta * vi;
    x[i] = xi;
    for (let a = 0; a < k; a++) z[a] += delta * G[row + a];
  }
  return sigma2;
}

function prepareFactorSweeps(model: FactorRiskModel, ws: RiskParityWorkspace): void {
  const { n, k } = model;
  const B = model.loadings;
  const F = model.factorCov;
  const G = ws.loadingsTimesF;
  for (let i = 0; i < n; i++) {
    for (let a = 0; a < k; a++) {
      let v = 0;
      for (let c = 0; c < k; c++) v += B[i * k + c] * F[c * k + a];
      G[i * k + a] = v;
    }
  }
}

/** z ← F Bᵀx for the factor sweeps. */
function refreshFactorState(model: FactorRiskModel, ws: RiskParityWorkspace): void {
  const { n, k } = model;
  const y = ws.vecK2;
  y.fill(0);
  for (let i = 0; i < n; i++) for (let a = 0; a < k; a++) y[a] += model.loadings[i * k + a] * ws.x[i];
  for (let a = 0; a < k; a++) {
    let v = 0;
    for (let c = 0; c < k; c++) v += model.factorCov[a * k + c] * y[c];
    ws.vecK[a] = v;
  }
}

/** Sweeps between exact recomputations of Σx for a dense Σ (bounds the drift of the incremental updates). */
const DENSE_RESYNC_SWEEPS = 16;

/**
 * Coordinate descent from ws.x. A dense sweep keeps Σx up to date incrementally, so its residual
 * test costs no extra pass over Σ (memory traffic dominates at large N); Σx is recomputed
 * exactly every DENSE_RESYNC_SWEEPS sweeps and before any decision to stop. A factor model's
 * Σx costs only O(NK) and is recomputed after every sweep.
 */
function coordinateDescentSolve(model: RiskModel, ws: RiskParityWorkspace, tolerance: number, maxSweeps: number): SolverOutcome {
  const n = ws.n;
  const { x, s, b } = ws;
  if (model.kind === 'factor') prepareFactorSweeps(model, ws);
  covTimes(model, x, s, ws.scratchK);
  let residual = residualFrom(x, s, b);
  let sweeps = 0;
  let sweepsWithoutProgress = 0;
  let best = residual;
  while (residual > tolerance && sweeps < maxSweeps) {
    let sigma2 = 0;
    for (let i = 0; i < n; i++) sigma2 += x[i] * s[i];
    if (model.kind === 'factor') {
      refreshFactorState(model, ws);
      factorSweep(model, ws, sigma2);
      sweeps++;
      covTimes(model, x, s, ws.scratchK);
      residual = residualFrom(x, s, b);
    } else {
      denseSweep(model.cov, ws, sigma2);
      sweeps++;
      residual = residualFrom(x, s, b);
      if (residual <= tolerance || sweeps % DENSE_RESYNC_SWEEPS === 0 || sweepsWithoutProgress >= 9 || sweeps >= maxSweeps) {
        // Exact Σx before any decision to stop.
        covTimes(model, x, s, ws.scratchK);
        residual = residualFrom(x, s, b);
      }
    }
    if (!Number.isFinite(residual)) break;
    // Stagnation: no 10% gain over the last 10 sweeps once accepted (rounding level), or over
    // the last 50 otherwise (too slow to be worth continuing: Newton takes over).
    if (residual < 0.9 * best) {
      best = residual;
      sweepsWithoutProgress = 0;
    } else {
      sweepsWithoutProgress++;
      if (sweepsWithoutProgress >= (residual <= RISK_PARITY_ACCEPT_TOLERANCE ? 10 : 50)) break;
    }
  }
  return { iterations: sweeps, residual, ok: accepted(model, ws, residual) };
}

// ---------------------------------------------------------------------------------------------

/** Loads the starting point into ws.x (and Σx into ws.s); true when a usable warm start was given. */
function loadStart(model: RiskModel, ws: RiskParityWorkspace, warmStart: unknown): { warm: boolean; ignored: boolean } {
  const n = ws.n;
  const candidate: ArrayLike<number> | undefined = isRiskParityWarmStart(warmStart)
    ? warmStart.x
    : warmStart instanceof Float64Array || Array.isArray(warmStart)
      ? (warmStart as ArrayLike<number>)
      : undefined;
  if (candidate !== undefined && candidate.length === n) {
    let usable = true;
    for (let i = 0; i < n; i++) {
      const v = candidate[i];
      if (typeof v !== 'number' || !(v > 0) || !Number.isFinite(v)) usable = false;
      else ws.x[i] = v;
    }
    if (usable && rescaleToRay(model, ws.x, ws.s, ws.scratchK)) return { warm: true, ignored: false };
  }
  // Spinu (2013): x₀ = 1/√(1ᵀΣ1)·1, the best multiple of the vector of ones.
  ws.x.fill(1);
  if (!rescaleToRay(model, ws.x, ws.s, ws.scratchK)) {
    throw new OptimizationError('invalid-input', 'risk parity needs 1ᵀΣ1 > 0');
  }
  return { warm: false, ignored: warmStart !== undefined };
}

/**
 * Risk-budgeting (equal risk contribution by default) weights for a dense or factor risk model.
 * Long-only and fully invested by construction; the caller's bounds and groups are not applied
 * but reported in warnings ('constraints-not-applied').
 */
/**
 * Why no risk-budgeting portfolio exists, when that is the reason a solve failed: Spinu's
 * objective ½xᵀΣx − Σ b_i ln x_i has a minimiser iff no nonzero x ≥ 0 has Σx = 0 — along such an
 * x the quadratic term stays 0 while the log terms fall without bound (Spinu 2013, §2, from
 * memory). The solvers then drift towards that zero-risk combination, so a failed result whose
 * variance is (almost) 0 relative to its stand-alone risks names it. Undefined otherwise.
 */
function zeroRiskCombination(model: RiskModel, weights: Float64Array, variances: Float64Array, assetNames: readonly string[] | undefined): string | undefined {
  const n = model.n;
  const sigmaW = new Float64Array(n);
  covTimes(model, weights, sigmaW, new Float64Array(model.kind === 'factor' ? 2 * model.k : 2));
  let variance = 0;
  let standalone = 0;
  for (let i = 0; i < n; i++) {
    variance += weights[i] * sigmaW[i];
    standalone += weights[i] * Math.sqrt(variances[i]);
  }
  if (!(variance <= ZERO_RISK_SHARE * standalone * standalone)) return undefined;
  const members: string[] = [];
  for (let i = 0; i < n; i++) if (weights[i] > 1e-6) members.push(assetNames?.[i] ?? `asset ${i}`);
  return (
    `risk parity has no solution for these inputs: the long-only combination of ${members.join(', ')} has zero risk ` +
    '(the assets hedge each other perfectly; the covariance matrix is singular), so their risk contributions cannot be ' +
    'positive and equal to the budgets at any allocation. Drop one of them, or use a covariance estimate without the perfect hedge.'
  );
}

export function solveRiskParity(model: RiskModel, options: RiskParityOptions = {}): RiskParityResult {
  const n = model.n;
  if (!Number.isInteger(n) || n < 1) throw new OptimizationError('invalid-input', 'risk parity needs at least one asset');
  if (options.constraints !== undefined && options.constraints.n !== n) {
    throw new OptimizationError('invalid-input', `constraints are for ${options.constraints.n} assets, not ${n}`);
  }
  const ws = options.workspace !== undefined && options.workspace.fits(model) ? options.workspace : createRiskParityWorkspace(model);
  normaliseRiskBudgets(options.budgets, n, ws.b);
  assetVariances(model, ws.variances);
  for (let i = 0; i < n; i++) {
    const v = ws.variances[i];
    if (!(v > 0) || !Number.isFinite(v)) {
      throw new OptimizationError('invalid-input', `risk parity needs positive finite asset variances; asset ${i} has ${v}`);
    }
  }
  const degenerate = firstNearZeroVariance(ws.variances, n);
  if (degenerate >= 0) throw new OptimizationError('singular', nearZeroVarianceMessage('risk parity', degenerate, ws.variances[degenerate], options.assetNames));
  const tolerance = options.tolerance ?? RISK_PARITY_TARGET_TOLERANCE;
  const maxNewton = options.maxNewtonIterations ?? 100;
  const maxSweeps = options.maxSweeps ?? 1_000;
  const first: RiskParitySolver = options.solver ?? (model.kind === 'dense' && n > DENSE_NEWTON_MAX_N ? 'coordinate-descent' : 'newton');

  const start = loadStart(model, ws, options.warmStart);

  let newtonIterations = 0;
  let sweeps = 0;
  let fellBack = false;
  let bestResidual = Infinity;
  // Keeps the point with the smallest residual across the two solvers in ws.best.
  const remember = (outcome: SolverOutcome): void => {
    if (outcome.residual < bestResidual) {
      bestResidual = outcome.residual;
      ws.best.set(ws.x);
    }
  };
  if (first === 'newton') {
    const outcome = newtonSolve(model, ws, tolerance, maxNewton);
    newtonIterations = outcome.iterations;
    remember(outcome);
    if (!outcome.ok) {
      fellBack = true;
      // Continue from the Newton iterate if it is usable, else from the starting point.
      let usable = true;
      for (let i = 0; i < n; i++) if (!(ws.x[i] > 0) || !Number.isFinite(ws.x[i])) usable = false;
      if (!usable) loadStart(model, ws, options.warmStart);
      const second = coordinateDescentSolve(model, ws, tolerance, maxSweeps);
      sweeps = second.iterations;
      remember(second);
    }
  } else {
    const outcome = coordinateDescentSolve(model, ws, tolerance, maxSweeps);
    sweeps = outcome.iterations;
    remember(outcome);
    if (!outcome.ok && (model.kind === 'factor' || n <= DENSE_NEWTON_FALLBACK_MAX_N)) {
      // Newton polishes what coordinate descent left (fast local convergence).
      fellBack = true;
      covTimes(model, ws.x, ws.s, ws.scratchK);
      const second = newtonSolve(model, ws, tolerance, maxNewton);
      newtonIterations = second.iterations;
      remember(second);
    }
  }
  ws.x.set(ws.best);

  // Independent verification: Σx from scratch, residual of x∘(Σx) = b.
  const residual = riskBudgetResidual(model, ws.x, ws.b, ws.s, ws.scratchK);
  let total = 0;
  for (let i = 0; i < n; i++) total += ws.x[i];
  if (!Number.isFinite(total) || !(total > 0)) {
    throw new OptimizationError('not-converged', 'risk parity solvers produced no finite positive solution (is Σ positive definite?)');
  }
  const weights = new Float64Array(n);
  for (let i = 0; i < n; i++) weights[i] = ws.x[i] / total;
  const floor = residual > RISK_PARITY_ACCEPT_TOLERANCE ? residualRoundingFloor(model, ws.x, ws.s, ws.scratchK) : 0;
  // Rounding can excuse a residual only up to RISK_PARITY_ILL_CONDITIONED_MAX: beyond it the
  // contributions are visibly unequal and the result is not an answer.
  const converged = residual <= Math.max(RISK_PARITY_ACCEPT_TOLERANCE, Math.min(floor, RISK_PARITY_ILL_CONDITIONED_MAX));
  if (!converged) {
    const hedged = zeroRiskCombination(model, weights, ws.variances, options.assetNames);
    if (hedged) throw new OptimizationError('singular', hedged, 'risk parity has no solution: a long-only combination of assets has zero risk');
  }

  const warnings: { code: string; message: string }[] = [];
  if (converged && residual > RISK_PARITY_ACCEPT_TOLERANCE) {
    warnings.push({
      code: 'ill-conditioned',
      message: `risk parity verified x∘(Σx) = b only to ${residual.toExponential(3)}: cancellation in Σx limits double precision to about ${floor.toExponential(3)} for this covariance`,
    });
  }
  if (!converged) {
    warnings.push({
      code: 'not-converged',
      message: `risk parity stopped with max |x_i(Σx)_i − b_i| = ${residual.toExponential(3)} > ${RISK_PARITY_ACCEPT_TOLERANCE} after ${newtonIterations} Newton steps and ${sweeps} coordinate sweeps`,
    });
  }
  if (start.ignored) warnings.push({ code: 'warm-start-ignored', message: 'the warm start was not a positive vector of the right length; started from 1/√(1ᵀΣ1)' });
  warnings.push(...constraintsNotAppliedWarnings('risk-parity', weights, options.constraints, { budget: 1 }, { assetNames: options.assetNames }));

  const solverName = fellBack
    ? first === 'newton' ? 'newton→coordinate-descent' : 'coordinate-descent→newton'
    : first === 'newton' ? (model.kind === 'factor' ? 'newton-woodbury' : 'newton') : 'coordinate-descent';
  return {
    weights,
    diagnostics: { iterations: newtonIterations + sweeps, converged, kktResidual: residual, solver: solverName },
    warmStart: { kind: 'risk-parity', x: Float64Array.from(ws.x) },
    warnings,
    details: { newtonIterations, coordinateSweeps: sweeps, residual, fellBack, warmStarted: start.warm, budgets: Float64Array.from(ws.b) },
  };
}
