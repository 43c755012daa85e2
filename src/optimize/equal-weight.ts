import { closedFormRuleResult, prepareClosedFormRule, type ClosedFormRuleOptions } from './closed-form-rule.js';
import type { MethodResult } from './types.js';
import { OptimizationError } from './types.js';

/**
 * The 1/N portfolio: every asset gets budget/N. It uses no inputs at all, which is exactly why
 * it is the benchmark estimation-heavy methods must beat (DeMiguel, Garlappi & Uppal 2009,
 * Review of Financial Studies 22(5)).
 */

export type EqualWeightOptions = ClosedFormRuleOptions;

/** w_i = budget/N, in place when `out` is given. */
export function fillEqualWeights(out: Float64Array, budget = 1): Float64Array {
  const n = out.length;
  if (n === 0) throw new OptimizationError('invalid-input', 'equal weight needs at least one asset');
  out.fill(budget / n);
  return out;
}

export function equalWeight(n: number, options: EqualWeightOptions = {}): MethodResult {
  if (!Number.isInteger(n) || n < 1) throw new OptimizationError('invalid-input', `equal weight needs a positive asset count, got ${n}`);
  const { budget, out } = prepareClosedFormRule(n, options);
  return closedFormRuleResult('equal-weight', fillEqualWeights(out, budget), budget, options);
}
