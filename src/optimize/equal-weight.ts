import { constraintsNotAppliedWarnings } from './constraint-check.js';
import type { ConstraintSet, MethodResult } from './types.js';
import { OptimizationError } from './types.js';

/**
 * The 1/N portfolio: every asset gets budget/N. It uses no inputs at all, which is exactly why
 * it is the benchmark estimation-heavy methods must beat (DeMiguel, Garlappi & Uppal 2009,
 * Review of Financial Studies 22(5)).
 */

export interface EqualWeightOptions {
  /** Total to invest; defaults to `constraints.budget`, else 1. */
  readonly budget?: number;
  /** The caller's constraints: not applied, only checked and reported in warnings. */
  readonly constraints?: ConstraintSet;
  readonly assetNames?: readonly string[];
  /** Output buffer of length n (reused by the stress loop). */
  readonly out?: Float64Array;
}

/** w_i = budget/N, in place when `out` is given. */
export function fillEqualWeights(out: Float64Array, budget = 1): Float64Array {
  const n = out.length;
  if (n === 0) throw new OptimizationError('invalid-input', 'equal weight needs at least one asset');
  out.fill(budget / n);
  return out;
}

export function equalWeight(n: number, options: EqualWeightOptions = {}): MethodResult {
  if (!Number.isInteger(n) || n < 1) throw new OptimizationError('invalid-input', `equal weight needs a positive asset count, got ${n}`);
  if (options.constraints !== undefined && options.constraints.n !== n) {
    throw new OptimizationError('invalid-input', `constraints are for ${options.constraints.n} assets, not ${n}`);
  }
  const budget = options.budget ?? options.constraints?.budget ?? 1;
  if (!Number.isFinite(budget)) throw new OptimizationError('invalid-input', `budget must be finite, got ${budget}`);
  const out = options.out ?? new Float64Array(n);
  if (out.length !== n) throw new OptimizationError('invalid-input', `output buffer has length ${out.length}, not ${n}`);
  const weights = fillEqualWeights(out, budget);
  let sum = 0;
  for (let i = 0; i < n; i++) sum += weights[i];
  return {
    weights,
    diagnostics: { iterations: 0, converged: true, kktResidual: Math.abs(sum - budget), solver: 'closed-form' },
    warnings: constraintsNotAppliedWarnings('equal-weight', weights, options.constraints, { budget }, { assetNames: options.assetNames }),
  };
}
