/**
 * Covariance representations shared by estimation, optimisation and stress.
 * All matrices are row-major Float64Array. Units are per period (not annualised);
 * annualisation happens only when results are reported.
 */

/** A dense N×N covariance matrix Σ (row-major, symmetric). */
export interface DenseRiskModel {
  readonly kind: 'dense';
  readonly n: number;
  readonly cov: Float64Array; // n*n
}

/**
 * A factor risk model Σ = B F Bᵀ + D. Never expanded to N×N in the hot path:
 * products and solves go through the factor structure (Woodbury, O(N·K²)).
 */
export interface FactorRiskModel {
  readonly kind: 'factor';
  readonly n: number;
  readonly k: number;
  readonly factorNames: readonly string[];
  readonly loadings: Float64Array; // B, n*k row-major
  readonly factorCov: Float64Array; // F, k*k
  readonly specificVar: Float64Array; // diag(D), length n
}

export type RiskModel = DenseRiskModel | FactorRiskModel;
