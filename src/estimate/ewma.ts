import type { CovarianceEstimate, CovarianceOptions } from './covariance.js';
import { columnCrossProducts, gatherCentredColumns } from './cross-products.js';
import { EstimationError } from './errors.js';
import { selectedRowCount, requireRows, type ReturnHistory } from './history.js';
import { outputOrNew, workspaceOrNew } from './workspace.js';

/** RiskMetrics' decay for daily data (RiskMetrics Technical Document, 4th ed., 1996): common practice. */
export const RISKMETRICS_DAILY_DECAY = 0.94;

export interface EwmaOptions extends CovarianceOptions {
  /** Decay λ ∈ (0, 1]; default 0.94. λ = 1 weighs every row equally. */
  readonly decay?: number;
  /**
   * How the mean is treated. 'zero' (default): returns are taken as deviations from zero, as
   * RiskMetrics does for daily data (RiskMetrics Technical Document 1996). 'weighted': the
   * EWMA-weighted mean x̄_w = Σ_p w_p x_p is removed first.
   */
  readonly mean?: 'zero' | 'weighted';
}

/**
 * Exponentially weighted covariance (RiskMetrics Technical Document, 4th ed., 1996):
 *   Σ = Σ_p w_p (x_p − c)(x_p − c)ᵀ,  w_p = λ^(m−1−p) / Σ_q λ^(m−1−q),
 * c = 0 or the weighted mean (see `mean`). Rows are in time order, the last row newest; with a
 * row selection the position in the selection sets the weight (a block bootstrap keeps the
 * order inside blocks). The weights are normalised to sum to one over the m rows used, so a short
 * history is not biased towards zero; this equals the RiskMetrics recursion
 * Σ_p = λΣ_{p−1} + (1−λ)x_p x_pᵀ started at 0, divided by 1 − λ^m. No degrees-of-freedom
 * correction is applied (numpy.cov with aweights and ddof = 0 gives the same matrix).
 * `effectiveObservations` is Kish's effective sample size 1/Σ w_p², which tends to
 * (1+λ)/(1−λ) ≈ 32.3 for λ = 0.94 on long histories.
 */
export function ewmaCovariance(history: ReturnHistory, options: EwmaOptions = {}): CovarianceEstimate {
  const n = history.series;
  const m = selectedRowCount(history, options.rows);
  requireRows(m, 2, 'an EWMA covariance');
  const decay = options.decay ?? RISKMETRICS_DAILY_DECAY;
  const workspace = workspaceOrNew(options.workspace);
  const out = outputOrNew(options.out, n * n, 'covariance');

  const weights = ewmaWeights(decay, m, workspace.buffer('weights', m));
  let sumSq = 0;
  for (let p = 0; p < m; p++) sumSq += weights[p] * weights[p];

  let centre: Float64Array | undefined;
  if (options.mean === 'weighted') {
    centre = workspace.buffer('mean', n);
    weightedMean(history, options.rows, weights, m, centre);
  }
  // Scaling each row by √w_p makes the plain cross products carry the weights.
  const rootWeights = workspace.buffer('root-weights', m);
  for (let p = 0; p < m; p++) rootWeights[p] = Math.sqrt(weights[p]);
  const columns = gatherCentredColumns(history, options.rows, m, centre, rootWeights, workspace.buffer('columns', n * m));
  columnCrossProducts(columns, n, m, 1, out);
  return { model: { kind: 'dense', n, cov: out }, method: 'ewma', shrinkage: 0, effectiveObservations: 1 / sumSq };
}

/** Normalised EWMA weights w_p = λ^(m−1−p)/Σ_q λ^q, p = 0..m−1 (last newest), into `out`. */
export function ewmaWeights(decay: number, m: number, out: Float64Array = new Float64Array(m)): Float64Array {
  if (!(decay > 0 && decay <= 1)) throw new EstimationError('invalid-input', `EWMA decay must lie in (0, 1], got ${decay}`);
  let power = 1;
  let total = 0;
  for (let p = m - 1; p >= 0; p--) {
    out[p] = power;
    total += power;
    power *= decay;
  }
  for (let p = 0; p < m; p++) out[p] /= total;
  return out;
}

/**
 * Rows that carry 1 − tolerance of the (infinite-history) weight: ln(tolerance)/ln(λ)
 * (RiskMetrics Technical Document, 4th ed., 1996; 74.4 rows for λ = 0.94 at 1 %).
 */
export function ewmaEffectiveWindow(decay: number, tolerance = 0.01): number {
  if (!(decay > 0 && decay < 1)) throw new EstimationError('invalid-input', `EWMA decay must lie in (0, 1), got ${decay}`);
  return Math.log(tolerance) / Math.log(decay);
}

function weightedMean(
  history: ReturnHistory,
  rows: Int32Array | undefined,
  weights: Float64Array,
  m: number,
  out: Float64Array,
): void {
  const n = history.series;
  const x = history.values;
  out.fill(0, 0, n);
  for (let p = 0; p < m; p++) {
    const offset = (rows === undefined ? p : rows[p]) * n;
    const w = weights[p];
    for (let j = 0; j < n; j++) out[j] += w * x[offset + j];
  }
}
