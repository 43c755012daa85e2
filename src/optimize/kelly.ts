import type { RiskModel } from '../linalg/risk-model.js';
import { kktResidual } from './kkt.js';
import { meanVariance } from './mean-variance.js';
import { isQpWarmStart, QpWorkspace, solveQp } from './qp.js';
import type { QpMethodOptions, QpMethodResult } from './qp-method.js';
import type { QpProblem, QpSolution, QpWarmStart } from './qp-types.js';
import { OptimizationError, type ConstraintSet, type MethodResult } from './types.js';

/**
 * Kelly (1956) growth-optimal portfolio over scenarios, with fractional Kelly as constant
 * relative risk aversion (MacLean, Thorp & Ziemba 2011):
 *
 *   maximise φ(w) = Σ_s p_s·u(1 + r_sᵀw)   under the constraint set,
 *   u(W) = log W (fraction 1),  u(W) = (W^{1−γ} − 1)/(1 − γ) with γ = 1/fraction otherwise,
 *
 * r_s the per-period simple returns of scenario s (rows of an S×N matrix), p_s their
 * probabilities (equal by default).
 *
 * Newton's method (Boyd & Vandenberghe, Convex Optimization, §10.2 — Newton with equality
 * constraints, here with the bounds and groups carried into every step): at w, with W_s = 1 + r_sᵀw,
 *   ∇φ = Σ p_s W_s^{−γ} r_s,   −∇²φ = H = γ·Σ p_s W_s^{−γ−1} r_s r_sᵀ,
 * the step solves the QP  maximise ∇φᵀd − ½dᵀHd over w + d feasible (the shared active-set QP,
 * warm-started from the previous step's working set), followed by a backtracking (Armijo) line
 * search that starts at the fraction-to-the-boundary step 0.99·max{α: W_s(w + αd) > 0 ∀s}, so
 * wealth stays positive in every scenario. Converges when the KKT residual of the problem at w
 * (via the QP's multipliers) is below `tolerance`.
 */
export interface KellyOptions extends QpMethodOptions {
  /** f ∈ (0, 1]; γ = 1/f. Default 1 (log utility). */
  readonly fraction?: number;
  /** Scenario probabilities p_s (≥ 0, normalised here). Default equal. */
  readonly scenarioWeights?: Float64Array;
  /** Newton iterations (default 50). */
  readonly maxNewtonIterations?: number;
}

export interface KellyResult extends MethodResult {
  /** Σ p_s u(1 + r_sᵀw) at the optimum. */
  readonly expectedUtility: number;
  /** Σ p_s log(1 + r_sᵀw): expected log growth per period at the optimum. */
  readonly growthRate: number;
  readonly newtonIterations: number;
}

/** Opaque warm start of the Kelly method: the last iterate and its QP working set. */
export interface KellyWarmStart {
  readonly kind: 'kelly';
  readonly weights: Float64Array;
  readonly qp: QpWarmStart;
}

const DEFAULT_KELLY_TOLERANCE = 1e-12;
/** Fraction of the distance to zero wealth that a step may cover (interior-point practice). */
const FRACTION_TO_BOUNDARY = 0.99;
const ARMIJO = 1e-4;
/** Wealth every scenario must keep (a small margin above 0, so rounding cannot fake a solvent start). */
const WEALTH_MARGIN = 1e-9;

/** Σ p_s u(1 + r_sᵀw) for CRRA γ (γ = 1: log). −Infinity when some wealth is ≤ 0. */
export function expectedUtility(
  scenarios: Float64Array,
  scenarioCount: number,
  w: Float64Array,
  gamma: number,
  scenarioWeights?: Float64Array,
): number {
  const n = w.length;
  let total = 0;
  for (let s = 0; s < scenarioCount; s++) {
    let wealth = 1;
    const row = s * n;
    for (let i = 0; i < n; i++) wealth += scenarios[row + i] * w[i];
    if (!(wealth > 0)) return -Infinity;
    const p = scenarioWeights ? scenarioWeights[s] : 1 / scenarioCount;
    total += p * crraUtility(wealth, gamma);
  }
  return total;
}

/** u(W) = log W for γ = 1, (W^{1−γ} − 1)/(1 − γ) otherwise (continuous in γ at 1). */
export function crraUtility(wealth: number, gamma: number): number {
  if (gamma === 1) return Math.log(wealth);
  // expm1 keeps (W^{1−γ} − 1)/(1 − γ) accurate when γ is close to 1.
  const a = 1 - gamma;
  return Math.expm1(a * Math.log(wealth)) / a;
}

/** Growth-optimal (or fractional Kelly) weights over scenario returns; see the module comment. */
export function kelly(
  scenarios: Float64Array,
  scenarioCount: number,
  constraints: ConstraintSet,
  options: KellyOptions = {},
): KellyResult {
  const n = constraints.n;
  const fraction = options.fraction ?? 1;
  if (!(fraction > 0 && fraction <= 1)) throw new OptimizationError('invalid-input', `Kelly fraction must be in (0, 1], got ${fraction}`);
  const gamma = 1 / fraction;
  if (!(scenarioCount >= 1) || scenarios.length !== scenarioCount * n) {
    throw new OptimizationError('invalid-input', `scenario matrix must be ${scenarioCount}×${n}`);
  }
  for (let k = 0; k < scenarios.length; k++) {
    if (!Number.isFinite(scenarios[k])) throw new OptimizationError('invalid-input', 'scenario returns must be finite');
  }
  const p = normalisedWeights(options.scenarioWeights, scenarioCount);
  const tolerance = options.tolerance ?? DEFAULT_KELLY_TOLERANCE;
  const maxNewton = options.maxNewtonIterations ?? 50;
  const workspace = options.workspace ?? new QpWorkspace(n, constraints.groups.length);

  const state = new NewtonState(scenarios, scenarioCount, n, p, gamma);
  let qpWarm: QpWarmStart | undefined;
  let w: Float64Array;
  const warm = options.warmStart as Partial<KellyWarmStart> | undefined;
  if (warm && warm.kind === 'kelly' && warm.weights instanceof Float64Array && warm.weights.length === n && state.minWealth(warm.weights) > WEALTH_MARGIN && isFeasibleFor(constraints, warm.weights)) {
    w = Float64Array.from(warm.weights);
    qpWarm = isQpWarmStart(warm.qp) ? warm.qp : undefined;
  } else {
    w = startingPoint(state, constraints, gamma, workspace);
  }

  let iterations = 0;
  let qpIterations = 0;
  let converged = false;
  let residual = Infinity;
  let last: QpSolution | undefined;
  const d = new Float64Array(n);
  const trial = new Float64Array(n);
  for (; iterations < maxNewton; iterations++) {
    state.evaluate(w);
    const problem = state.newtonProblem(w, constraints);
    last = solveQp(problem, { warmStart: qpWarm, workspace, maxIterations: options.maxIterations });
    qpIterations += last.iterations + last.phase1Iterations;
    qpWarm = last.warmStart;
    residual = kktResidual(problem, w, last.multipliers);
    if (residual <= tolerance) {
      converged = true;
      break;
    }
    let slope = 0;
    for (let i = 0; i < n; i++) {
      d[i] = last.x[i] - w[i];
      slope += state.gradient[i] * d[i];
    }
    const f0 = state.value;
    const roundingLevel = 1e-12 * Math.max(1, Math.abs(f0));
    // A clearly negative slope means the step QP failed; stop and report.
    if (slope < -roundingLevel) break;
    let alpha = Math.min(1, FRACTION_TO_BOUNDARY * state.maxStep(d));
    // Once the predicted gain is at the rounding level of φ, Armijo cannot tell gains from
    // rounding: take the (quadratically convergent) Newton step as it is.
    let accepted = slope <= roundingLevel;
    if (accepted) for (let i = 0; i < n; i++) trial[i] = w[i] + alpha * d[i];
    for (let k = 0; k < 60 && !accepted; k++) {
      for (let i = 0; i < n; i++) trial[i] = w[i] + alpha * d[i];
      const f = expectedUtility(scenarios, scenarioCount, trial, gamma, p);
      if (f >= f0 + ARMIJO * alpha * slope) accepted = true;
      else alpha *= 0.5;
    }
    if (!accepted) break;
    w.set(trial);
  }
  state.evaluate(w);
  const warnings: { code: string; message: string }[] = [];
  if (!converged) {
    warnings.push({
      code: 'not-converged',
      message: `Kelly (Newton) stopped after ${iterations} iterations with KKT residual ${residual.toExponential(2)}.`,
    });
  }
  return {
    weights: w,
    diagnostics: { iterations: qpIterations, converged, kktResidual: residual, solver: 'Newton + active-set QP (scenario Kelly)' },
    warmStart: { kind: 'kelly', weights: Float64Array.from(w), qp: last?.warmStart ?? qpWarm } satisfies Partial<KellyWarmStart>,
    warnings,
    expectedUtility: state.value,
    growthRate: expectedUtility(scenarios, scenarioCount, w, 1, p),
    newtonIterations: iterations,
  };
}

/**
 * Moments-only fallback: the quadratic (continuous-time) approximation of fractional Kelly is
 * mean-variance with risk aversion λ = γ = 1/fraction (g(w) ≈ μᵀw − (γ/2)·wᵀΣw; Thorp 2006,
 * continuous approximation f* = (m − r)/s²). The caller reports that the approximation was used.
 */
export function kellyMomentsFallback(
  model: RiskModel,
  mean: Float64Array,
  constraints: ConstraintSet,
  options: QpMethodOptions & { readonly fraction?: number } = {},
): QpMethodResult {
  const fraction = options.fraction ?? 1;
  if (!(fraction > 0 && fraction <= 1)) throw new OptimizationError('invalid-input', `Kelly fraction must be in (0, 1], got ${fraction}`);
  return meanVariance(model, mean, constraints, 1 / fraction, options);
}

/** Per-iterate quantities of the Newton method; buffers allocated once per solve. */
class NewtonState {
  readonly gradient: Float64Array;
  readonly hessian: Float64Array;
  readonly linear: Float64Array;
  readonly wealth: Float64Array;
  value = 0;

  constructor(
    private readonly scenarios: Float64Array,
    private readonly count: number,
    private readonly n: number,
    private readonly p: Float64Array,
    private readonly gamma: number,
  ) {
    this.gradient = new Float64Array(n);
    this.hessian = new Float64Array(n * n);
    this.linear = new Float64Array(n);
    this.wealth = new Float64Array(count);
  }

  minWealth(w: Float64Array): number {
    let m = Infinity;
    for (let s = 0; s < this.count; s++) m = Math.min(m, this.wealthAt(s, w));
    return m;
  }

  private wealthAt(s: number, w: Float64Array): number {
    let v = 1;
    const row = s * this.n;
    for (let i = 0; i < this.n; i++) v += this.scenarios[row + i] * w[i];
    return v;
  }

  /** φ(w), ∇φ(w) and H = −∇²φ(w) = γ Σ p_s W_s^{−γ−1} r_s r_sᵀ. */
  evaluate(w: Float64Array): void {
    const { n, count, scenarios, gamma, p } = this;
    const g = this.gradient;
    const h = this.hessian;
    g.fill(0);
    h.fill(0);
    let value = 0;
    for (let s = 0; s < count; s++) {
      const wealth = this.wealthAt(s, w);
      this.wealth[s] = wealth;
      if (p[s] === 0) continue;
      value += p[s] * crraUtility(wealth, gamma);
      const a = p[s] * Math.pow(wealth, -gamma);
      const b = (gamma * a) / wealth;
      const row = s * n;
      for (let i = 0; i < n; i++) {
        const ri = scenarios[row + i];
        if (ri === 0) continue;
        g[i] += a * ri;
        const bri = b * ri;
        const hRow = i * n;
        for (let j = 0; j <= i; j++) h[hRow + j] += bri * scenarios[row + j];
      }
    }
    for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) h[j * n + i] = h[i * n + j];
    this.value = value;
  }

  /** The Newton QP in the variable v = w + d: minimise ½vᵀHv − (∇φ + Hw)ᵀv. */
  newtonProblem(w: Float64Array, constraints: ConstraintSet): QpProblem {
    const { n } = this;
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += this.hessian[i * n + j] * w[j];
      this.linear[i] = this.gradient[i] + s;
    }
    return { hessian: { kind: 'dense', n, matrix: this.hessian }, linear: this.linear, constraints };
  }

  /** sup{α ≥ 0 : W_s + α·r_sᵀd > margin ∀s} (Infinity when no wealth falls along d). */
  maxStep(d: Float64Array): number {
    let alpha = Infinity;
    for (let s = 0; s < this.count; s++) {
      if (this.p[s] === 0) continue;
      let rd = 0;
      const row = s * this.n;
      for (let i = 0; i < this.n; i++) rd += this.scenarios[row + i] * d[i];
      if (rd < 0) alpha = Math.min(alpha, (this.wealth[s] - WEALTH_MARGIN) / -rd);
    }
    return alpha;
  }

  /** Scenario-weighted mean and covariance of the returns (for the starting point). */
  moments(): { mean: Float64Array; cov: Float64Array } {
    const { n, count, scenarios, p } = this;
    const mean = new Float64Array(n);
    for (let s = 0; s < count; s++) for (let i = 0; i < n; i++) mean[i] += p[s] * scenarios[s * n + i];
    const cov = new Float64Array(n * n);
    for (let s = 0; s < count; s++) {
      for (let i = 0; i < n; i++) {
        const di = scenarios[s * n + i] - mean[i];
        for (let j = 0; j <= i; j++) cov[i * n + j] += p[s] * di * (scenarios[s * n + j] - mean[j]);
      }
    }
    for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) cov[j * n + i] = cov[i * n + j];
    return { mean, cov };
  }
}

/**
 * A feasible start with positive wealth in every scenario: the quadratic approximation
 * (mean-variance with λ = γ on the scenario moments) when it keeps wealth positive — it is
 * usually close to the optimum — otherwise the allocation with the smallest second moment
 * E[(rᵀw)²] (wealth near 1 in every scenario).
 */
function startingPoint(state: NewtonState, constraints: ConstraintSet, gamma: number, workspace: QpWorkspace): Float64Array {
  const n = constraints.n;
  const { mean, cov } = state.moments();
  const tryProblem = (problem: QpProblem): Float64Array | undefined => {
    try {
      const x = solveQp(problem, { workspace }).x;
      return state.minWealth(x) > WEALTH_MARGIN ? x : undefined;
    } catch (error) {
      if (error instanceof OptimizationError && error.code === 'unbounded') return undefined;
      throw error;
    }
  };
  const approximate = tryProblem({ hessian: { kind: 'dense', n, matrix: cov, scale: gamma }, linear: mean, constraints });
  if (approximate) return approximate;
  const second = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) second[i * n + j] = cov[i * n + j] + mean[i] * mean[j];
  const quiet = tryProblem({ hessian: { kind: 'dense', n, matrix: second }, linear: new Float64Array(n), constraints });
  if (quiet) return quiet;
  throw new OptimizationError(
    'infeasible',
    'no allowed allocation was found that keeps wealth positive in every scenario (log utility needs 1 + rᵀw > 0)',
  );
}

function normalisedWeights(weights: Float64Array | undefined, count: number): Float64Array {
  const p = new Float64Array(count);
  if (!weights) return p.fill(1 / count);
  if (weights.length !== count) throw new OptimizationError('invalid-input', `expected ${count} scenario weights, got ${weights.length}`);
  let total = 0;
  for (let s = 0; s < count; s++) {
    const v = weights[s];
    if (!(v >= 0) || !Number.isFinite(v)) throw new OptimizationError('invalid-input', `scenario weight ${s} must be ≥ 0, got ${v}`);
    total += v;
  }
  if (!(total > 0)) throw new OptimizationError('invalid-input', 'scenario weights must not all be zero');
  for (let s = 0; s < count; s++) p[s] = weights[s] / total;
  return p;
}

function isFeasibleFor(constraints: ConstraintSet, w: Float64Array): boolean {
  const tol = 1e-10 * Math.max(1, Math.abs(constraints.budget));
  let sum = 0;
  for (let i = 0; i < constraints.n; i++) {
    if (w[i] < constraints.lower[i] - tol || w[i] > constraints.upper[i] + tol) return false;
    sum += w[i];
  }
  if (Math.abs(sum - constraints.budget) > tol) return false;
  for (const g of constraints.groups) {
    let s = 0;
    for (let k = 0; k < g.members.length; k++) s += w[g.members[k]];
    if (s < g.min - tol || s > g.max + tol) return false;
  }
  return true;
}
