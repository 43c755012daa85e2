import type { DenseRiskModel } from '../linalg/risk-model.js';
import { columnCrossProducts, demeanedColumns } from './cross-products.js';
import { ewmaCovariance } from './ewma.js';
import { selectedRowCount, requireRows, type ReturnHistory } from './history.js';
import { ledoitWolfConstantCorrelation, ledoitWolfIdentity } from './ledoit-wolf.js';
import { outputOrNew, workspaceOrNew, type EstimationWorkspace } from './workspace.js';

export type CovarianceMethod = 'sample' | 'ledoit-wolf' | 'ledoit-wolf-constant-correlation' | 'ewma';

/** A covariance estimate with what a reviewer needs to judge it. */
export interface CovarianceEstimate {
  readonly model: DenseRiskModel;
  readonly method: CovarianceMethod;
  /** Weight on the shrinkage target, in [0, 1] (0 means the sample matrix); 0 for sample and EWMA. */
  readonly shrinkage: number;
  /** Rows behind the estimate; for EWMA Kish's effective sample size 1/Σw². */
  readonly effectiveObservations: number;
  /** Average pairwise correlation r̄ (constant-correlation target only). */
  readonly meanCorrelation?: number;
}

/** Options shared by every covariance estimator. */
export interface CovarianceOptions {
  /** Row indices of the history to use (a bootstrap draw, repeats allowed); all rows when absent. */
  readonly rows?: Int32Array;
  /** N×N row-major buffer for the result; becomes `model.cov`. */
  readonly out?: Float64Array;
  /** Scratch reused across calls so repeated draws allocate nothing. */
  readonly workspace?: EstimationWorkspace;
}

/**
 * Unbiased sample covariance, divisor m − 1 (m rows used):
 *   S_ij = (1/(m−1)) Σ_p (x_pi − x̄_i)(x_pj − x̄_j).
 * The divisor matches numpy.cov's default (ddof = 1); (m−1)S ~ Wishart(m−1, Σ) under normality.
 */
export function sampleCovariance(history: ReturnHistory, options: CovarianceOptions = {}): CovarianceEstimate {
  const n = history.series;
  const m = selectedRowCount(history, options.rows);
  requireRows(m, 2, 'a sample covariance');
  const out = outputOrNew(options.out, n * n, 'covariance');
  const workspace = workspaceOrNew(options.workspace);
  const columns = demeanedColumns(history, options.rows, m, workspace.buffer('mean', n), workspace.buffer('columns', n * m));
  columnCrossProducts(columns, n, m, 1 / (m - 1), out);
  return { model: { kind: 'dense', n, cov: out }, method: 'sample', shrinkage: 0, effectiveObservations: m };
}

/** The covariance choice of a proposal's `estimation` block. */
export type CovarianceSpec =
  | { readonly method: 'sample' }
  | { readonly method: 'ledoit-wolf' }
  | { readonly method: 'ledoit-wolf-constant-correlation' }
  | { readonly method: 'ewma'; readonly decay?: number; readonly mean?: 'zero' | 'weighted' };

/** One entry point for every covariance estimator (the stress loop calls this per draw). */
export function estimateCovariance(
  history: ReturnHistory,
  spec: CovarianceSpec,
  options: CovarianceOptions = {},
): CovarianceEstimate {
  switch (spec.method) {
    case 'sample':
      return sampleCovariance(history, options);
    case 'ledoit-wolf':
      return ledoitWolfIdentity(history, options);
    case 'ledoit-wolf-constant-correlation':
      return ledoitWolfConstantCorrelation(history, options);
    case 'ewma':
      return ewmaCovariance(history, { ...options, decay: spec.decay, mean: spec.mean });
  }
}
