import type { RiskModel } from '../linalg/risk-model.js';
import { assetVariances } from '../linalg/risk-ops.js';
import { closedFormRuleResult, prepareClosedFormRule, type ClosedFormRuleOptions } from './closed-form-rule.js';
import type { MethodResult } from './types.js';
import { firstNearZeroVariance, nearZeroVarianceMessage } from './degenerate.js';
import { OptimizationError } from './types.js';

/**
 * Inverse-volatility weights w_i ∝ 1/σ_i, scaled to the budget. This is the equal risk
 * contribution portfolio when all correlations are equal, and for any two assets (Maillard,
 * Roncalli & Teïletche 2010, J. Portfolio Management 36(4)); otherwise it ignores correlations.
 */

export type InverseVolatilityOptions = ClosedFormRuleOptions;

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
  const { budget, out } = prepareClosedFormRule(n, options);
  // Variances go into the output buffer first, then are overwritten by the weights in place.
  assetVariances(model, out);
  const degenerate = firstNearZeroVariance(out, n);
  if (degenerate >= 0) throw new OptimizationError('singular', nearZeroVarianceMessage('inverse volatility', degenerate, out[degenerate], options.assetNames));
  return closedFormRuleResult('inverse-volatility', fillInverseVolatilityWeights(out, out, budget), budget, options);
}
