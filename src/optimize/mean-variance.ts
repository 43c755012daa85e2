import type { RiskModel } from '../linalg/risk-model.js';
import { solveMethodQp, type QpMethodOptions, type QpMethodResult } from './qp-method.js';
import type { QpProblem } from './qp-types.js';
import { OptimizationError, type ConstraintSet } from './types.js';

/**
 * Mean-variance (Markowitz 1952): maximise μᵀw − (λ/2)·wᵀΣw under the constraint set, i.e. the QP
 * minimise ½wᵀ(λΣ)w − μᵀw. With a factor model Σ = BFBᵀ + D the factor and specific parts may
 * carry their own risk aversion: μᵀw − (λ_f/2)·wᵀBFBᵀw − (λ_s/2)·wᵀDw (a single number means
 * λ_f = λ_s).
 *
 * No risk-free rate is taken: with the budget Σw = b fixed, scoring excess returns
 * (μ − r_f·1)ᵀw = μᵀw − r_f·b only shifts the objective by a constant, so the optimum is the same.
 */
export type RiskAversion = number | { readonly factor: number; readonly specific: number };

/** The QP of mean-variance for this risk model (never N×N for a factor model). */
export function meanVarianceProblem(
  model: RiskModel,
  mean: Float64Array,
  constraints: ConstraintSet,
  riskAversion: RiskAversion,
): QpProblem {
  if (mean.length !== model.n || constraints.n !== model.n) {
    throw new OptimizationError('invalid-input', `mean (${mean.length}), risk model (${model.n}) and constraints (${constraints.n}) disagree on the number of assets`);
  }
  const { factor, specific } = typeof riskAversion === 'number' ? { factor: riskAversion, specific: riskAversion } : riskAversion;
  for (const [name, value] of [['factor', factor], ['specific', specific]] as const) {
    if (!(value > 0) || !Number.isFinite(value)) {
      throw new OptimizationError('invalid-input', `${name} risk aversion must be a positive finite number, got ${value}`);
    }
  }
  if (model.kind === 'factor') {
    return { hessian: { kind: 'factor', model, factorScale: factor, specificScale: specific }, linear: mean, constraints };
  }
  if (factor !== specific) {
    throw new OptimizationError('invalid-input', 'separate factor and specific risk aversion needs a factor risk model');
  }
  return { hessian: { kind: 'dense', n: model.n, matrix: model.cov, scale: factor }, linear: mean, constraints };
}

/** Mean-variance optimum; see the module comment. */
export function meanVariance(
  model: RiskModel,
  mean: Float64Array,
  constraints: ConstraintSet,
  riskAversion: RiskAversion,
  options: QpMethodOptions = {},
): QpMethodResult {
  return solveMethodQp(meanVarianceProblem(model, mean, constraints, riskAversion), options);
}
