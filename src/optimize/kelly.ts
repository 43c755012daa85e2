import type { RiskModel } from '../linalg/risk-model.js';
import { findArbitrage } from './arbitrage.js';
import { kktResidual } from './kkt.js';
import { KellyWorkspace, NewtonState, WEALTH_MARGIN } from './kelly-state.js';
import { meanVariance } from './mean-variance.js';
import { isQpWarmStart, QpWorkspace, solveQp } from './qp.js';
import type { QpMethodOptions, QpMethodResult } from './qp-method.js';
import type { QpProblem, QpSolution, QpWarmStart } from './qp-types.js';
import { OptimizationError, type ConstraintSet, type MethodResult } from './types.js';

export { crraUtility, expectedUtility } from './kelly-utility.js';
export { KellyWorkspace } from './kelly-state.js';

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
 * (with the multipliers of a step QP at w) is below `tolerance`.
 *
 * Cost: the Hessian, O(S·N²) (kelly-cross-products.ts), dominates; the gradient, wealth and line
 * search are O(S·N) (wealth and step returns skip zero weights). After a full Newton step the
 * convergence test at the new point reuses the previous Hessian (see the loop), so a solve that
 * converges in one step builds one Hessian, not two. Reuse a KellyWorkspace (or the QpWorkspace
 * it is attached to) across solves to avoid allocating the S×N and N×N buffers.
 */
export interface KellyOptions extends QpMethodOptions {
  /** f ∈ (0, 1]; γ = 1/f. Default 1 (log utility). */
  readonly fraction?: number;
  /** Scenario probabilities p_s (≥ 0, normalised here). Default equal. Also the way to pass distinct rows with counts. */
  readonly scenarioWeights?: Float64Array;
  /** Newton iterations (default 50). */
  readonly maxNewtonIterations?: number;
  /** Reusable Kelly buffers (one per method per loop in the stress engine); a fresh one per solve when absent. */
  readonly kellyWorkspace?: KellyWorkspace;
  /** Asset names, for the message when the scenarios admit an arbitrage. */
  readonly assetNames?: readonly string[];
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
  const kellyWorkspace = options.kellyWorkspace ?? kellyWorkspaceFor(options.workspace);
  kellyWorkspace.ensure(n, scenarioCount);
  const state = new NewtonState(scenarios, scenarioCount, n, gamma, kellyWorkspace);
  state.loadScenarios();
  state.loadProbabilities(options.scenarioWeights);
  const tolerance = options.tolerance ?? DEFAULT_KELLY_TOLERANCE;
  const maxNewton = options.maxNewtonIterations ?? 50;
  const workspace = options.workspace ?? new QpWorkspace(n, constraints.groups.length);

  let qpWarm: QpWarmStart | undefined;
  let w: Float64Array;
  const warm = options.warmStart as Partial<KellyWarmStart> | undefined;
  if (warm && warm.kind === 'kelly' && warm.weights instanceof Float64Array && warm.weights.length === n && state.computeWealth(warm.weights) > WEALTH_MARGIN && isFeasibleFor(constraints, warm.weights)) {
    w = Float64Array.from(warm.weights);
    qpWarm = isQpWarmStart(warm.qp) ? warm.qp : undefined;
    state.evaluateAtWealth();
  } else {
    w = startingPoint(state, constraints, gamma, workspace);
    state.evaluateFirstOrder(w);
  }

  let iterations = 0;
  let qpIterations = 0;
  let converged = false;
  let residual = Infinity;
  let last: QpSolution | undefined;
  const d = kellyWorkspace.direction;
  const trial = kellyWorkspace.trial;
  let hessianAtW = false;
  while (iterations < maxNewton) {
    if (!hessianAtW) state.addHessian();
    hessianAtW = true;
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
    for (let k = 0; k < 60 && !accepted; k++) {
      if (state.lineUtility(alpha) >= f0 + ARMIJO * alpha * slope) accepted = true;
      else alpha *= 0.5;
    }
    if (!accepted) break;
    for (let i = 0; i < n; i++) trial[i] = w[i] + alpha * d[i];
    w.set(trial);
    iterations++;
    state.evaluateFirstOrder(w);
    hessianAtW = false;
    // Convergence test before paying for the Hessian at w: after a full step, the step QP at w
    // with the previous iterate's Hessian (warm-started from the working set just found, so
    // usually one factorisation of the reduced Hessian and no step) gives multipliers for the
    // gradient at w. At a point where the QP does not move, those multipliers depend only on
    // ∇φ(w) and the working set — not on H — so the KKT residual below is the one the Newton QP
    // with the exact Hessian would report. If it fails, the next iteration builds H at w.
    if (alpha === 1) {
      const check = convergenceCheck(state.newtonProblem(w, constraints), w, qpWarm, workspace, options.maxIterations);
      if (check) {
        qpIterations += check.solution.iterations + check.solution.phase1Iterations;
        residual = check.residual;
        if (residual <= tolerance) {
          last = check.solution;
          converged = true;
          break;
        }
      }
    }
  }
  // An unconverged or extremely leveraged result is checked for an arbitrage among the scenarios:
  // then there is no optimum at all, and the last iterate must not be passed off as one.
  if (!converged || leverageOf(w, constraints.budget) > SUSPICIOUS_LEVERAGE) {
    const arbitrage = findArbitrage(scenarios, scenarioCount, constraints);
    if (arbitrage) throw new OptimizationError('unbounded', describeArbitrage(arbitrage.direction, options.assetNames), 'Kelly has no optimum: the scenarios admit an arbitrage');
  }
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
    growthRate: state.growthRate(),
    newtonIterations: iterations,
  };
}

/**
 * max|w_i| / max(1, |budget|) above which a "converged" Kelly result is checked for an arbitrage:
 * with log utility along an arbitrage the gradient decays like 1/t, so an absolute KKT test can
 * pass at huge weights. 1000× the budget is far beyond any leverage a real mandate allows.
 */
const SUSPICIOUS_LEVERAGE = 1000;

function leverageOf(w: Float64Array, budget: number): number {
  let m = 0;
  for (let i = 0; i < w.length; i++) m = Math.max(m, Math.abs(w[i]));
  return Number.isFinite(m) ? m / Math.max(1, Math.abs(budget)) : Infinity;
}

/** The plain-words reason for an unbounded Kelly problem, naming the assets of the arbitrage. */
function describeArbitrage(direction: Float64Array, assetNames: readonly string[] | undefined): string {
  const parts: string[] = [];
  for (let i = 0; i < direction.length; i++) {
    if (Math.abs(direction[i]) > 1e-9) parts.push(`${direction[i] > 0 ? 'long' : 'short'} ${assetNames?.[i] ?? `asset ${i}`}`);
  }
  return (
    `Kelly has no optimum: the scenarios admit an arbitrage (${parts.slice(0, 6).join(', ')}${parts.length > 6 ? ', …' : ''} never loses in any ` +
    'scenario and gains in some), so expected log growth increases without bound as that position is scaled up. ' +
    'Add bounds or long-only constraints, or use more return history.'
  );
}

/**
 * The step QP at w with the Hessian at hand and the KKT residual at w with its multipliers, or
 * undefined when that QP fails (the full iteration that follows then solves it with the exact
 * Hessian and reports any error).
 */
function convergenceCheck(
  problem: QpProblem,
  w: Float64Array,
  warmStart: QpWarmStart | undefined,
  workspace: QpWorkspace,
  maxIterations: number | undefined,
): { solution: QpSolution; residual: number } | undefined {
  try {
    const solution = solveQp(problem, { warmStart, workspace, maxIterations });
    return { solution, residual: kktResidual(problem, w, solution.multipliers) };
  } catch (error) {
    if (error instanceof OptimizationError) return undefined;
    throw error;
  }
}

/**
 * Callers that pass a QpWorkspace but no KellyWorkspace (the stress engine binds one QpWorkspace
 * per method) get Kelly buffers attached to that QpWorkspace, so repeated solves stop allocating
 * either way; the two have the same lifetime and the same rule (one solve at a time).
 */
const attachedWorkspaces = new WeakMap<QpWorkspace, KellyWorkspace>();

function kellyWorkspaceFor(qpWorkspace: QpWorkspace | undefined): KellyWorkspace {
  if (!qpWorkspace) return new KellyWorkspace();
  let ws = attachedWorkspaces.get(qpWorkspace);
  if (!ws) {
    ws = new KellyWorkspace();
    attachedWorkspaces.set(qpWorkspace, ws);
  }
  return ws;
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
      return state.computeWealth(x) > WEALTH_MARGIN ? x : undefined;
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
