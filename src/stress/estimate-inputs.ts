import { estimateCovariance, type CovarianceSpec } from '../estimate/covariance.js';
import { pcaFactorModel, regressionFactorModel } from '../estimate/factor-model.js';
import type { ReturnHistory } from '../estimate/history.js';
import { sampleMean } from '../estimate/means.js';
import type { EstimationWorkspace } from '../estimate/workspace.js';
import type { RiskModel } from '../linalg/risk-model.js';

/** How a return history turns into (μ, Σ): fixed for a request, applied to the base rows and to every draw. */
export interface EstimationPlan {
  readonly covariance: CovarianceSpec;
  readonly factorModel: 'none' | 'regression' | 'pca';
  readonly pcaFactors?: number;
}

export interface HistoryData {
  readonly assets: ReturnHistory;
  readonly factors?: ReturnHistory;
  readonly factorNames?: readonly string[];
}

export interface EstimatedInputs {
  readonly mean: Float64Array;
  readonly riskModel: RiskModel;
  /** What the estimator reports (shrinkage intensity, explained share…), for the report. */
  readonly notes: Record<string, number>;
}

/**
 * Estimates μ and the risk model from the selected rows (all rows when `rows` is absent; a
 * bootstrap draw passes its row indices, so nothing is copied). Asset and factor rows are
 * selected together.
 */
export function estimateFromHistory(
  data: HistoryData,
  plan: EstimationPlan,
  rows?: Int32Array,
  buffers?: { mean?: Float64Array; cov?: Float64Array; workspace?: EstimationWorkspace },
): EstimatedInputs {
  const mean = sampleMean(data.assets, { rows, out: buffers?.mean });
  if (plan.factorModel === 'regression') {
    if (!data.factors || !data.factorNames) throw new Error('regression factor model needs factor returns');
    const est = regressionFactorModel(data.assets, data.factors, data.factorNames, { rows, workspace: buffers?.workspace });
    return { mean, riskModel: est.model, notes: { residualDegreesOfFreedom: est.residualDegreesOfFreedom } };
  }
  if (plan.factorModel === 'pca') {
    const est = pcaFactorModel(data.assets, plan.pcaFactors ?? 1, { rows, workspace: buffers?.workspace });
    return { mean, riskModel: est.model, notes: { explainedShare: est.explainedShare } };
  }
  const est = estimateCovariance(data.assets, plan.covariance, { rows, out: buffers?.cov, workspace: buffers?.workspace });
  const notes: Record<string, number> = { shrinkage: est.shrinkage, effectiveObservations: est.effectiveObservations };
  if (est.meanCorrelation !== undefined) notes.meanCorrelation = est.meanCorrelation;
  return { mean, riskModel: est.model, notes };
}
