import { isQpWarmStart, solveQp, type QpWorkspace } from './qp.js';
import type { QpProblem, QpSolution } from './qp-types.js';
import { ACCEPTED_KKT_RESIDUAL, type MethodResult } from './types.js';

/** Options shared by the QP-based methods. */
export interface QpMethodOptions {
  /** The `warmStart` of an earlier MethodResult for a nearby problem (ignored unless it is a QP working set of the right size). */
  readonly warmStart?: unknown;
  /** Reusable solver buffers (one per method per loop in the stress engine). */
  readonly workspace?: QpWorkspace;
  readonly maxIterations?: number;
  readonly tolerance?: number;
}

/** A MethodResult plus the raw QP solution (multipliers, objective) for callers that need them. */
export interface QpMethodResult extends MethodResult {
  readonly solution: QpSolution;
}

/** Solves a method's QP and turns the outcome into a MethodResult with diagnostics and warnings. */
export function solveMethodQp(problem: QpProblem, options: QpMethodOptions = {}): QpMethodResult {
  const warm = isQpWarmStart(options.warmStart) ? options.warmStart : undefined;
  const solution = solveQp(problem, {
    warmStart: warm,
    workspace: options.workspace,
    maxIterations: options.maxIterations,
    tolerance: options.tolerance,
  });
  const warnings: { code: string; message: string }[] = [];
  if (solution.regularisation === 'ridge') {
    warnings.push({
      code: 'singular-risk',
      message:
        'The risk model has no risk along some allowed direction, so the optimum is not unique; one optimal ' +
        `allocation is reported (steps were regularised with a ridge of ${solution.ridge.toExponential(2)}).`,
    });
  }
  if (solution.hessianForm === 'factor-expanded') {
    warnings.push({
      code: 'factor-model-expanded',
      message: 'Some assets have zero specific variance, so the factor model was expanded to a full covariance matrix.',
    });
  }
  // Converged only when the solver's own test passed and the KKT residual meets the documented tolerance.
  const converged = solution.converged && solution.kktResidual <= ACCEPTED_KKT_RESIDUAL;
  if (!converged) {
    warnings.push({
      code: 'not-converged',
      message: solution.converged
        ? `The QP solver stopped with KKT residual ${solution.kktResidual.toExponential(2)}, above the accepted ${ACCEPTED_KKT_RESIDUAL}.`
        : `The QP solver stopped after ${solution.iterations} iterations without meeting its optimality test (KKT residual ${solution.kktResidual.toExponential(2)}).`,
    });
  }
  return {
    weights: solution.x,
    diagnostics: {
      iterations: solution.iterations + solution.phase1Iterations,
      converged,
      kktResidual: solution.kktResidual,
      solver: solution.hessianForm === 'factor' ? 'active-set QP (factor model, Woodbury)' : 'active-set QP (dense)',
    },
    warmStart: solution.warmStart,
    warnings,
    solution,
  };
}
