import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { symmetricEigenDecomposition } from '../linalg/eigen.js';
import type { FactorRiskModel } from '../linalg/risk-model.js';
import { columnCrossProducts, columnDot, demeanedColumns } from './cross-products.js';
import { EstimationError } from './errors.js';
import { selectedRowCount, requireRows, type ReturnHistory } from './history.js';
import { sampleCovariance } from './covariance.js';
import { outputOrNew, workspaceOrNew, type EstimationWorkspace } from './workspace.js';

/** Output buffers for a factor model (B n×k, F k×k, diag D n); each is allocated when absent. */
export interface FactorModelBuffers {
  readonly loadings?: Float64Array;
  readonly factorCov?: Float64Array;
  readonly specificVar?: Float64Array;
}

export interface RegressionOptions {
  /** Row indices used in both histories (a bootstrap draw keeps asset and factor rows together). */
  readonly rows?: Int32Array;
  readonly workspace?: EstimationWorkspace;
  readonly out?: FactorModelBuffers & { readonly alpha?: Float64Array };
}

export interface RegressionFactorEstimate {
  readonly model: FactorRiskModel;
  /** Intercepts α_i of the per-asset regressions. */
  readonly alpha: Float64Array;
  /** Share of each asset's variance the factors explain, 1 − SSR_i/SST_i (in-sample). */
  readonly rSquared: Float64Array;
  /** m − K − 1, the divisor of the residual variances. */
  readonly residualDegreesOfFreedom: number;
  readonly effectiveObservations: number;
}

/**
 * Time-series factor model from supplied factor returns: for every asset the OLS regression
 * r_ti = α_i + Σ_a B_ia f_ta + e_ti with an intercept. By the Frisch–Waugh–Lovell theorem
 * (Lovell 1963, JASA 58(304)) the slopes equal those of the demeaned data,
 * B_iᵀ = (F_cᵀF_c)⁻¹ F_cᵀ r_c,i, which is how they are computed (one K×K factorisation for all
 * assets), and α_i = r̄_i − B_i f̄. The risk model Σ = B F Bᵀ + D takes
 *   F = sample covariance of the factor returns, divisor m − 1;
 *   D_i = Σ_t e_ti² / (m − K − 1), the degrees-of-freedom-corrected residual variance.
 * Fails when the factor returns are collinear (F_cᵀF_c not positive definite) or m ≤ K + 1.
 */
export function regressionFactorModel(
  assets: ReturnHistory,
  factors: ReturnHistory,
  factorNames: readonly string[],
  options: RegressionOptions = {},
): RegressionFactorEstimate {
  const n = assets.series;
  const k = factors.series;
  if (factors.periods !== assets.periods) {
    throw new EstimationError('invalid-input', `factor returns have ${factors.periods} rows, asset returns ${assets.periods}`);
  }
  if (factorNames.length !== k) {
    throw new EstimationError('invalid-input', `${factorNames.length} factor names for ${k} factor series`);
  }
  const m = selectedRowCount(assets, options.rows);
  requireRows(m, k + 2, `a regression on ${k} factors`);
  const workspace = workspaceOrNew(options.workspace);
  const loadings = outputOrNew(options.out?.loadings, n * k, 'loadings');
  const factorCov = outputOrNew(options.out?.factorCov, k * k, 'factor covariance');
  const specificVar = outputOrNew(options.out?.specificVar, n, 'specific variance');
  const alpha = outputOrNew(options.out?.alpha, n, 'alpha');
  const rSquared = new Float64Array(n);

  const assetMean = workspace.buffer('mean', n);
  const factorMean = workspace.buffer('factor-mean', k);
  const assetColumns = demeanedColumns(assets, options.rows, m, assetMean, workspace.buffer('columns', n * m));
  const factorColumns = demeanedColumns(factors, options.rows, m, factorMean, workspace.buffer('factor-columns', k * m));
  const gram = columnCrossProducts(factorColumns, k, m, 1, workspace.buffer('gram', k * k));
  const gramInverse = invertGram(gram, k, workspace.buffer('gram-inverse', k * k));
  for (let i = 0; i < k * k; i++) factorCov[i] = gram[i] / (m - 1);

  const cross = workspace.buffer('factor-cross', k);
  const residual = workspace.buffer('residual', m);
  const dof = m - k - 1;
  for (let i = 0; i < n; i++) {
    const start = i * m;
    for (let a = 0; a < k; a++) cross[a] = columnDot(factorColumns, a * m, assetColumns, start, m);
    let intercept = assetMean[i];
    for (let a = 0; a < k; a++) {
      let b = 0;
      for (let c = 0; c < k; c++) b += gramInverse[a * k + c] * cross[c];
      loadings[i * k + a] = b;
      intercept -= b * factorMean[a];
    }
    alpha[i] = intercept;
    // Residuals of the demeaned fit equal those of the fit with intercept.
    for (let p = 0; p < m; p++) residual[p] = assetColumns[start + p];
    for (let a = 0; a < k; a++) {
      const b = loadings[i * k + a];
      const fStart = a * m;
      for (let p = 0; p < m; p++) residual[p] -= b * factorColumns[fStart + p];
    }
    const ssr = columnDot(residual, 0, residual, 0, m);
    const sst = columnDot(assetColumns, start, assetColumns, start, m);
    specificVar[i] = ssr / dof;
    rSquared[i] = sst > 0 ? 1 - ssr / sst : 0;
  }
  return {
    model: { kind: 'factor', n, k, factorNames: [...factorNames], loadings, factorCov, specificVar },
    alpha,
    rSquared,
    residualDegreesOfFreedom: dof,
    effectiveObservations: m,
  };
}

/** (F_cᵀF_c)⁻¹ through ml-matrix's Cholesky (K×K, K small: cost is negligible beside m·N·K). */
function invertGram(gram: Float64Array, k: number, out: Float64Array): Float64Array {
  const rows: number[][] = [];
  for (let a = 0; a < k; a++) rows.push(Array.from(gram.subarray(a * k, (a + 1) * k)));
  const cholesky = new CholeskyDecomposition(new Matrix(rows));
  if (!cholesky.isPositiveDefinite()) {
    throw new EstimationError('singular', 'factor returns are collinear over the rows used (their cross-product matrix is singular)');
  }
  const inverse = cholesky.solve(Matrix.eye(k, k));
  for (let a = 0; a < k; a++) for (let c = 0; c < k; c++) out[a * k + c] = 0.5 * (inverse.get(a, c) + inverse.get(c, a));
  return out;
}

export interface PcaOptions {
  readonly rows?: Int32Array;
  readonly workspace?: EstimationWorkspace;
  /**
   * Lower bound for the specific variances. Default 1e-8 · tr(S)/N: the residual diagonal is
   * exactly zero when k = N (and can round below zero), and a zero specific variance would make
   * the factor model singular.
   */
  readonly specificFloor?: number;
}

export interface PcaFactorEstimate {
  readonly model: FactorRiskModel;
  /** All eigenvalues of the sample covariance, descending. */
  readonly eigenvalues: Float64Array;
  /** Share of total variance the k components carry: Σ_{a≤k} λ_a / tr(S). */
  readonly explainedShare: number;
  readonly effectiveObservations: number;
}

/**
 * Statistical factor model by principal components of the sample covariance S (divisor m − 1):
 * S = V Λ Vᵀ, eigenvalues descending. Convention: B = V_k (the k leading unit eigenvectors, N×k,
 * orthonormal columns) and F = diag(λ_1..λ_k), so the factors are the principal-component
 * portfolios and F holds their variances; B F Bᵀ = V_k Λ_k V_kᵀ is the best rank-k approximation of S
 * (Eckart–Young). D_i = max(S_ii − Σ_a λ_a V_ia², floor). Eigenvector signs follow
 * symmetricEigenDecomposition's rule (largest-magnitude entry positive). Eigen-decomposition is O(N³) through
 * ml-matrix: fine for base inputs; per bootstrap draw prefer the regression model when N is large.
 */
export function pcaFactorModel(history: ReturnHistory, components: number, options: PcaOptions = {}): PcaFactorEstimate {
  const n = history.series;
  if (!Number.isInteger(components) || components < 1 || components > n) {
    throw new EstimationError('invalid-input', `PCA needs 1..${n} components, got ${components}`);
  }
  const k = components;
  const sample = sampleCovariance(history, { rows: options.rows, workspace: options.workspace });
  const s = sample.model.cov;
  const { values, vectors } = symmetricEigenDecomposition(s, n);

  let trace = 0;
  for (let i = 0; i < n; i++) trace += s[i * n + i];
  const floor = options.specificFloor ?? 1e-8 * (trace / n);
  const loadings = new Float64Array(n * k);
  const factorCov = new Float64Array(k * k);
  let explained = 0;
  for (let a = 0; a < k; a++) {
    // Rounding can leave a tiny negative eigenvalue on a rank-deficient S; a variance cannot be.
    const lambda = Math.max(values[a], 0);
    factorCov[a * k + a] = lambda;
    explained += lambda;
    for (let i = 0; i < n; i++) loadings[i * k + a] = vectors[i * n + a];
  }
  const specificVar = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let common = 0;
    for (let a = 0; a < k; a++) common += factorCov[a * k + a] * loadings[i * k + a] * loadings[i * k + a];
    specificVar[i] = Math.max(s[i * n + i] - common, floor);
  }
  const factorNames = Array.from({ length: k }, (_, a) => `pc${a + 1}`);
  return {
    model: { kind: 'factor', n, k, factorNames, loadings, factorCov, specificVar },
    eigenvalues: values,
    explainedShare: trace > 0 ? explained / trace : 0,
    effectiveObservations: sample.effectiveObservations,
  };
}
