import type { FactorRiskModel } from '../linalg/risk-model.js';
import type { ConstraintSet } from './types.js';

/**
 * The quadratic term of a QP, ½xᵀHx.
 * - dense: H = scale·matrix (n×n row-major, symmetric positive semi-definite).
 * - factor: H = factorScale·BFBᵀ + specificScale·D from a factor risk model; never expanded to
 *   N×N (reduced systems are solved through Woodbury, see src/linalg/factor-solve.ts).
 */
export type QpHessian =
  | { readonly kind: 'dense'; readonly n: number; readonly matrix: Float64Array; readonly scale?: number }
  | {
      readonly kind: 'factor';
      readonly model: FactorRiskModel;
      readonly factorScale: number;
      readonly specificScale: number;
    };

/**
 * minimise ½xᵀHx − cᵀx subject to lower ≤ x ≤ upper, Σx = budget and, for every group,
 * min ≤ Σ_{i∈g} x_i ≤ max (all from `constraints`).
 */
export interface QpProblem {
  readonly hessian: QpHessian;
  /** c (length n). */
  readonly linear: Float64Array;
  readonly constraints: ConstraintSet;
}

/**
 * Where a solve ended: the point and its working set. Feeding it to the next solve of a nearby
 * problem (same constraints, slightly different H or c) usually finishes in one or two steps.
 * States: −1 at the lower bound / group minimum, +1 at the upper bound / group maximum, 0 free or
 * inactive. Anything inconsistent with the next problem is dropped, never trusted.
 */
export interface QpWarmStart {
  readonly x: Float64Array;
  readonly assetState: Int8Array;
  readonly groupState: Int8Array;
}

/**
 * Lagrange multipliers with the sign convention
 *   Hx − c = budget·1 + Σ_g groups[g]·1_g + bounds,
 * so bounds[i] ≥ 0 at a lower bound and ≤ 0 at an upper bound; groups[g] ≥ 0 at the group minimum
 * and ≤ 0 at its maximum; all are 0 for inactive constraints. budget has either sign.
 */
export interface QpMultipliers {
  readonly budget: number;
  readonly groups: Float64Array;
  readonly bounds: Float64Array;
}

/**
 * How the reduced systems were made solvable (see qp-hessian.ts):
 * - 'none': the reduced Hessians were positive definite as given.
 * - 'augmented': some reduced Hessian was singular (e.g. a zero-variance asset, or fewer
 *   observations than assets), so ρ·Σ_{r∈W} a_r a_rᵀ over the working-set rows (budget and
 *   active group limits, ρ = trace(H)/n) was added. Steps keep a_rᵀp = 0, so iterates and
 *   multipliers are exactly those of the original problem.
 * - 'ridge': even the Hessian projected on some face was singular (zero risk along a feasible
 *   direction). A ridge ε·I (ε = `ridge`, 1e-10·trace(H)/n, raised ×100 if needed) regularised
 *   the steps, which then act as proximal-point steps; the point returned still satisfies the
 *   KKT conditions of the original problem (see kktResidual), but it is one of many optima.
 */
export type QpRegularisation = 'none' | 'augmented' | 'ridge';

export interface QpSolution {
  readonly x: Float64Array;
  /** ½xᵀHx − cᵀx at x. */
  readonly objective: number;
  /** Active-set iterations in the main phase. */
  readonly iterations: number;
  /** Iterations spent finding a feasible start (0 when the start was already feasible). */
  readonly phase1Iterations: number;
  readonly converged: boolean;
  /** Scaled KKT residual from src/optimize/kkt.ts at (x, multipliers). */
  readonly kktResidual: number;
  readonly multipliers: QpMultipliers;
  readonly warmStart: QpWarmStart;
  readonly regularisation: QpRegularisation;
  readonly ridge: number;
  /** 'factor-expanded' when a factor Hessian had (numerically) zero specific variance and was expanded to dense. */
  readonly hessianForm: 'dense' | 'factor' | 'factor-expanded';
}
