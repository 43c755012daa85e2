import type { CovarianceEstimate, CovarianceOptions } from './covariance.js';
import { columnCrossProducts, demeanedColumns } from './cross-products.js';
import { selectedRowCount, requireRows, type ReturnHistory } from './history.js';
import { outputOrNew, workspaceOrNew, type EstimationWorkspace } from './workspace.js';

/**
 * Ledoit–Wolf shrinkage estimators. Both remove the sample mean of the rows used and work from
 * the divisor-m sample matrix S = ZᵀZ/m (Z the demeaned m×N rows), as the papers do; the
 * result is δ·target + (1 − δ)·S with the estimated optimal intensity δ ∈ [0, 1].
 */

/** What both estimators start from: the demeaned columns Z (m×N) and S = ZᵀZ/m, in `options.out` when given. */
function divisorMSample(
  history: ReturnHistory,
  options: CovarianceOptions,
): { n: number; m: number; s: Float64Array; columns: Float64Array; workspace: EstimationWorkspace } {
  const n = history.series;
  const m = selectedRowCount(history, options.rows);
  requireRows(m, 2, 'a Ledoit–Wolf covariance');
  const workspace = workspaceOrNew(options.workspace);
  const s = outputOrNew(options.out, n * n, 'covariance');
  const columns = demeanedColumns(history, options.rows, m, workspace.buffer('mean', n), workspace.buffer('columns', n * m));
  columnCrossProducts(columns, n, m, 1 / m, s);
  return { n, m, s, columns, workspace };
}

/**
 * Shrinkage to a scaled identity μI, μ = tr(S)/N (Ledoit & Wolf 2004, "A well-conditioned
 * estimator for large-dimensional covariance matrices", J. Multivariate Analysis 88(2)):
 *   d² = ‖S − μI‖²/N,  b̄² = (1/m²) Σ_p ‖z_p z_pᵀ − S‖²/N,  b² = min(b̄², d²),  δ = b²/d²,
 * with ‖·‖ the Frobenius norm. Σ_p ‖z_p z_pᵀ − S‖² = Σ_p ‖z_p‖⁴ − m‖S‖², so b̄² costs O(mN)
 * once S is known. Same conventions as scikit-learn's LedoitWolf (mean removed, divisor n).
 * The trace is preserved: tr(Σ̂) = tr(S).
 */
export function ledoitWolfIdentity(history: ReturnHistory, options: CovarianceOptions = {}): CovarianceEstimate {
  const { n, m, s, columns, workspace } = divisorMSample(history, options);

  let trace = 0;
  let frobeniusSq = 0;
  for (let i = 0; i < n * n; i++) frobeniusSq += s[i] * s[i];
  for (let i = 0; i < n; i++) trace += s[i * n + i];
  const mu = trace / n;
  // ‖S − μI‖² = ‖S‖² − 2μ·tr(S) + Nμ².
  const dSq = (frobeniusSq - 2 * mu * trace + n * mu * mu) / n;
  const bBarSq = Math.max(0, (sumOfSquaredRowNorms(columns, n, m, workspace) / m - frobeniusSq) / (n * m));
  const bSq = Math.min(bBarSq, dSq);
  // d² = 0 means S already is a multiple of I: nothing to shrink.
  const delta = dSq > 0 ? bSq / dSq : 0;

  for (let i = 0; i < n * n; i++) s[i] *= 1 - delta;
  for (let i = 0; i < n; i++) s[i * n + i] += delta * mu;
  return { model: { kind: 'dense', n, cov: s }, method: 'ledoit-wolf', shrinkage: delta, effectiveObservations: m };
}

/**
 * Shrinkage to the constant-correlation target (Ledoit & Wolf 2004, "Honey, I shrunk the sample
 * covariance matrix", J. Portfolio Management 30(4), Appendix): F_ii = s_ii, F_ij = r̄·√(s_ii s_jj),
 * r̄ the average of the N(N−1)/2 sample correlations;
 *   π̂ = Σ_ij (1/m) Σ_p (z_pi z_pj − s_ij)²
 *   ρ̂ = Σ_i π̂_ii + Σ_{i≠j} r̄ √(s_jj/s_ii) ϑ̂_ii,ij,  ϑ̂_ii,ij = (1/m) Σ_p (z_pi² − s_ii)(z_pi z_pj − s_ij)
 *   γ̂ = ‖F − S‖²,  κ̂ = (π̂ − ρ̂)/γ̂,  δ* = max(0, min(κ̂/m, 1)).
 * (The paper's symmetric sum with r̄/2 on both ϑ terms equals the single-term sum with r̄ used here.)
 * Guards: with N ≤ 2 the target equals S (r̄ is the only correlation), so δ* = 0 and S is returned;
 * an asset with (numerically) zero variance has no correlation: it is left out of r̄ and of ρ̂'s
 * cross terms, and its target row is zero (its sample row is zero up to rounding).
 */
export function ledoitWolfConstantCorrelation(history: ReturnHistory, options: CovarianceOptions = {}): CovarianceEstimate {
  const { n, m, s, columns, workspace } = divisorMSample(history, options);

  const sd = workspace.buffer('sd', n);
  let largestSd = 0;
  for (let i = 0; i < n; i++) {
    sd[i] = Math.sqrt(s[i * n + i]);
    largestSd = Math.max(largestSd, sd[i]);
  }
  // A constant series (cash) keeps a rounding-level variance after demeaning; below 1e-12 of the
  // largest volatility it is treated as exactly constant, i.e. without a correlation.
  for (let i = 0; i < n; i++) if (sd[i] <= 1e-12 * largestSd) sd[i] = 0;
  const meanCorrelation = averageCorrelation(s, sd, n);
  const result = (shrinkage: number): CovarianceEstimate => ({
    model: { kind: 'dense', n, cov: s },
    method: 'ledoit-wolf-constant-correlation',
    shrinkage,
    effectiveObservations: m,
    meanCorrelation,
  });
  if (n <= 2) return result(0);

  let gamma = 0;
  let frobeniusSq = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const sij = s[i * n + j];
      frobeniusSq += sij * sij;
      if (i !== j) {
        const gap = meanCorrelation * sd[i] * sd[j] - sij;
        gamma += gap * gap;
      }
    }
  }
  if (!(gamma > 0)) return result(0);

  const pi = sumOfSquaredRowNorms(columns, n, m, workspace) / m - frobeniusSq;
  const rho = rhoHat(columns, s, sd, meanCorrelation, n, m, workspace);
  const kappa = (pi - rho) / gamma;
  const delta = Math.max(0, Math.min(kappa / m, 1));

  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      // Computed once and mirrored: (r̄·s_i)·s_j and (r̄·s_j)·s_i round differently.
      const v = delta * meanCorrelation * sd[i] * sd[j] + (1 - delta) * s[i * n + j];
      s[i * n + j] = v;
      s[j * n + i] = v;
    }
  }
  return result(delta);
}

/** Σ_p ‖z_p‖⁴ for the m demeaned rows held column-major in `columns`. */
function sumOfSquaredRowNorms(columns: Float64Array, n: number, m: number, workspace: EstimationWorkspace): number {
  const rowNormSq = workspace.buffer('row-norms', m);
  rowNormSq.fill(0, 0, m);
  for (let j = 0; j < n; j++) {
    const start = j * m;
    for (let p = 0; p < m; p++) rowNormSq[p] += columns[start + p] * columns[start + p];
  }
  let total = 0;
  for (let p = 0; p < m; p++) total += rowNormSq[p] * rowNormSq[p];
  return total;
}

/** r̄ over pairs whose variances are both positive; 0 when there is no such pair. */
function averageCorrelation(s: Float64Array, sd: Float64Array, n: number): number {
  let total = 0;
  let pairs = 0;
  for (let i = 0; i < n; i++) {
    if (!(sd[i] > 0)) continue;
    for (let j = i + 1; j < n; j++) {
      if (!(sd[j] > 0)) continue;
      total += s[i * n + j] / (sd[i] * sd[j]);
      pairs++;
    }
  }
  return pairs > 0 ? total / pairs : 0;
}

/**
 * ρ̂ of the constant-correlation estimator (see ledoitWolfConstantCorrelation) in O(mN): the
 * cross terms are linear in the other columns,
 *   Σ_{j≠i} s_j ϑ̂_ii,ij = (1/m)⟨z_i³, u⟩ − (1/m) s_i Σ_p z_pi⁴ − s_ii (Σ_j s_j s_ij − s_i s_ii),
 * with u = Σ_j s_j z_j (s_j the volatilities, 0 for constant series), so no N² loop over m is needed.
 */
function rhoHat(
  columns: Float64Array,
  s: Float64Array,
  sd: Float64Array,
  meanCorrelation: number,
  n: number,
  m: number,
  workspace: EstimationWorkspace,
): number {
  const weighted = workspace.buffer('weighted-sum', m);
  weighted.fill(0, 0, m);
  for (let j = 0; j < n; j++) {
    const sdj = sd[j];
    if (sdj === 0) continue;
    const start = j * m;
    for (let p = 0; p < m; p++) weighted[p] += sdj * columns[start + p];
  }
  let diagonal = 0;
  let cross = 0;
  for (let i = 0; i < n; i++) {
    const start = i * m;
    let fourth = 0;
    let cubeDotWeighted = 0;
    for (let p = 0; p < m; p++) {
      const z = columns[start + p];
      const cube = z * z * z;
      fourth += cube * z;
      cubeDotWeighted += cube * weighted[p];
    }
    const sii = s[i * n + i];
    diagonal += fourth / m - sii * sii;
    if (sd[i] === 0) continue;
    let sdWeightedCov = 0;
    for (let j = 0; j < n; j++) if (j !== i) sdWeightedCov += sd[j] * s[i * n + j];
    cross += (cubeDotWeighted / m - (sd[i] * fourth) / m - sii * sdWeightedCov) / sd[i];
  }
  return diagonal + meanCorrelation * cross;
}
