import type { RiskModel } from '../linalg/risk-model.js';
import { assetVariances } from '../linalg/risk-ops.js';
import { constraintsNotAppliedWarnings } from './constraint-check.js';
import type { ConstraintSet, MethodResult } from './types.js';
import { OptimizationError } from './types.js';

/**
 * Inverse-volatility weights w_i ∝ 1/σ_i, scaled to the budget. This is the equal risk
 * contribution portfolio when all correlations are equal, and for any two assets (Maillard,
 * Roncalli & Teïletche 2010, J. Portfolio Management 36(4)); otherwise it ignores correlations.
 */

export interface InverseVolatilityOptions {
  /** Total to invest; defaults to `constraints.budget`, else 1. */
  readonly budget?: number;
  /** The caller's constraints: not applied, only checked and reported in warnings. */
  readonly constraints?: ConstraintSet;
  readonly assetNames?: readonly string[];
  /** Output buffer of length n (reused by the stress loop). */
  readonly out?: Float64Array;
}

/**
 * out ← budget · (1/σ) / Σ(1/σ_j) from asset variances (the diagonal of Σ), allocation-free.
 * Throws when a variance is not a positive finite number (1/σ would be undefined).
 */
export function fillInverseVolatilityWeights(variances: Float64Array, out: Float64Array, budget = 1): Float64Array {
  const n = variances.length;
  if (n === 0) throw new OptimizationError('invalid-input', 'inverse volatility needs at least one asset');
  let total = 0;
  for (let i = 0; i < n; i++) {
    const v = variances[i];
    if (!(v > 0) || !Number.isFinite(v)) {
      throw new OptimizationError('invalid-input', `inverse volatility needs positive finite variances; asset ${i} has ${v}`);
    }
    const inv = 1 / Math.sqrt(v);
    out[i] = inv;
    total += inv;
  }
  const scale = budget / total;
  for (let i = 0; i < n; i++) out[i] *= scale;
  return out;
}

export function inverseVolatility(model: RiskModel, options: InverseVolatilityOptions = {}): MethodResult {
  const n = model.n;
  if (options.constraints !== undefined && options.constraints.n !== n) {
    throw new OptimizationError('invalid-input', `constraints are for ${options.constraints.n} assets, not ${n}`);
  }
  const budget = options.budget ?? options.constraints?.budget ?? 1;
  if (!Number.isFinite(budget)) throw new OptimizationError('invalid-input', `budget must be finite, got ${budget}`);
  const out = options.out ?? new Float64Array(n);
  if (out.length !== n) throw new OptimizationError('invalid-input', `output buffer has length ${out.length}, not ${n}`);
  // Variances go into the output buffer first, then are overwritten by the weights in place.
  assetVariances(model, out);
  const weights = fillInverseVolatilityWeights(out, out, budget);
  let sum = 0;
  for (let i = 0; i < n; i++) sum += weights[i];
  return {
    weights,
    diagnostics: { iterations: 0, converged: true, kktResidual: Math.abs(sum - budget), solver: 'closed-form' },
    warnings: constraintsNotAppliedWarnings('inverse-volatility', weights, options.constraints, { budget }, { assetNames: options.assetNames }),
  };
}
