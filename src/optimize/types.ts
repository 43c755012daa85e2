/**
 * Shared shapes for the allocation methods. Everything is per period; weights are fractions.
 */

/** min ≤ Σ_{i ∈ members} w_i ≤ max. Missing bounds are ±Infinity. */
export interface GroupConstraint {
  readonly name: string;
  readonly members: Int32Array; // asset indices
  readonly min: number;
  readonly max: number;
}

/** The feasible set every constrained method works in. */
export interface ConstraintSet {
  readonly n: number;
  readonly lower: Float64Array; // per-asset lower bounds (−Infinity allowed when not long-only)
  readonly upper: Float64Array; // per-asset upper bounds (+Infinity allowed)
  readonly budget: number; // Σ w_i = budget
  readonly groups: readonly GroupConstraint[];
}

/**
 * Largest KKT residual with which a QP-based solve counts as converged (per-period units; weights
 * are fractions, so 1e-8 is a millionth of a basis point). The solvers aim far lower (about
 * 1e-14 on well-posed problems); a residual above this means the returned weights are not an
 * optimum, and the stress engine counts the draw as failed (meta.failureReasons).
 */
export const ACCEPTED_KKT_RESIDUAL = 1e-8;

/** How a solve went; reported beside every optimum. */
export interface SolveDiagnostics {
  readonly iterations: number;
  readonly converged: boolean;
  /** Largest violation of the KKT conditions (stationarity, primal feasibility, complementarity, dual sign) at the returned point. */
  readonly kktResidual: number;
  readonly solver: string;
}

export interface MethodResult {
  readonly weights: Float64Array;
  readonly diagnostics: SolveDiagnostics;
  /** Opaque state that lets the next solve of a nearby problem start from this one (e.g. the active set). */
  readonly warmStart?: unknown;
  /** Plain-language notes, e.g. "bounds violated by the unconstrained method". */
  readonly warnings: readonly { code: string; message: string }[];
}

/** Why a problem has no answer. Mapped to HTTP 422 at the edge. */
export class OptimizationError extends Error {
  constructor(
    readonly code: 'infeasible' | 'unbounded' | 'not-converged' | 'singular' | 'invalid-input',
    message: string,
    /** A short label without per-solve details, so failed draws with the same cause are counted together. */
    readonly label?: string,
  ) {
    super(message);
    this.name = 'OptimizationError';
  }
}
