import type { RiskModel } from '../linalg/risk-model.js';
import { solveMethodQp, type QpMethodOptions, type QpMethodResult } from './qp-method.js';
import type { QpProblem } from './qp-types.js';
import { OptimizationError, type ConstraintSet } from './types.js';

/**
 * Minimum variance: minimise wᵀΣw under the constraint set (mean-variance with μ = 0; the means
 * play no part, which is why its weights are immune to errors in expected returns).
 * With budget only the answer is the global minimum-variance portfolio Σ⁻¹1/(1ᵀΣ⁻¹1)
 * (Merton 1972).
 */
export function minimumVarianceProblem(model: RiskModel, constraints: ConstraintSet): QpProblem {
  if (constraints.n !== model.n) {
    throw new OptimizationError('invalid-input', `risk model (${model.n}) and constraints (${constraints.n}) disagree on the number of assets`);
  }
  const linear = new Float64Array(model.n);
  if (model.kind === 'factor') {
    return { hessian: { kind: 'factor', model, factorScale: 1, specificScale: 1 }, linear, constraints };
  }
  return { hessian: { kind: 'dense', n: model.n, matrix: model.cov }, linear, constraints };
}

/** Minimum-variance optimum. */
export function minimumVariance(model: RiskModel, constraints: ConstraintSet, options: QpMethodOptions = {}): QpMethodResult {
  return solveMethodQp(minimumVarianceProblem(model, constraints), options);
}
