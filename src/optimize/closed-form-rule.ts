import { constraintsNotAppliedWarnings } from './constraint-check.js';
import type { ConstraintSet, MethodResult } from './types.js';
import { OptimizationError } from './types.js';

/**
 * What the closed-form allocation rules (1/N, inverse volatility) share: they take no constraints
 * into the computation, only scale to a budget, and report the caller's constraints they ignore.
 */

export interface ClosedFormRuleOptions {
  /** Total to invest; defaults to `constraints.budget`, else 1. */
  readonly budget?: number;
  /** The caller's constraints: not applied, only checked and reported in warnings. */
  readonly constraints?: ConstraintSet;
  readonly assetNames?: readonly string[];
  /** Output buffer of length n (reused by the stress loop). */
  readonly out?: Float64Array;
}

/** Checks the options against n assets and resolves the budget and the output buffer. */
export function prepareClosedFormRule(n: number, options: ClosedFormRuleOptions): { budget: number; out: Float64Array } {
  if (options.constraints !== undefined && options.constraints.n !== n) {
    throw new OptimizationError('invalid-input', `constraints are for ${options.constraints.n} assets, not ${n}`);
  }
  const budget = options.budget ?? options.constraints?.budget ?? 1;
  if (!Number.isFinite(budget)) throw new OptimizationError('invalid-input', `budget must be finite, got ${budget}`);
  const out = options.out ?? new Float64Array(n);
  if (out.length !== n) throw new OptimizationError('invalid-input', `output buffer has length ${out.length}, not ${n}`);
  return { budget, out };
}

/**
 * The MethodResult of a closed-form rule: no iterations; the only optimality condition left is
 * the budget, so the KKT residual is |Σw − budget|; warnings name the constraints not applied.
 */
export function closedFormRuleResult(
  methodName: string,
  weights: Float64Array,
  budget: number,
  options: ClosedFormRuleOptions,
): MethodResult {
  let sum = 0;
  for (let i = 0; i < weights.length; i++) sum += weights[i];
  return {
    weights,
    diagnostics: { iterations: 0, converged: true, kktResidual: Math.abs(sum - budget), solver: 'closed-form' },
    warnings: constraintsNotAppliedWarnings(methodName, weights, options.constraints, { budget }, { assetNames: options.assetNames }),
  };
}
