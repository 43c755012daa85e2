import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import type { FactorRiskModel, RiskModel } from '../linalg/risk-model.js';
import { assetVariances, covTimes, toDenseCovariance } from '../linalg/risk-ops.js';

/**
 * How a portfolio's risk splits across its holdings and sources, per period (not annualised).
 *
 * - Euler risk contributions RC_i = w_i(Σw)_i/σ(w): volatility is homogeneous of degree 1 in w,
 *   so Σ RC_i = σ(w) exactly (Tasche 2008, "Capital allocation to business units and
 *   sub-portfolios: the Euler principle", arXiv:0708.2542).
 * - Diversification ratio wᵀσ/√(wᵀΣw) (Choueifaty & Coignard 2008, "Toward maximum
 *   diversification", J. Portfolio Management 35(1)).
 * - Effective number of holdings 1/Σw_i² (the inverse Herfindahl index of the weights).
 * - Effective number of bets exp(−Σ p_n ln p_n), p_n = (e_nᵀw)²λ_n/wᵀΣw over the principal
 *   components (λ_n, e_n) of Σ (Meucci 2009, "Managing diversification", Risk 22(5)).
 * - Factor / specific variance wᵀBFBᵀw and wᵀDw when Σ = BFBᵀ + D.
 *
 * The *Into / *Of functions take caller buffers and allocate nothing (the stress hot path);
 * `decomposeRisk` allocates a full report for one portfolio.
 */

/** wᵀΣw. `scratchN` (length n) and `scratchK` (length 2k) avoid allocation. */
export function portfolioVariance(model: RiskModel, w: Float64Array, scratchN: Float64Array, scratchK?: Float64Array): number {
  covTimes(model, w, scratchN, scratchK);
  let v = 0;
  for (let i = 0; i < model.n; i++) v += w[i] * scratchN[i];
  return v;
}

/** √(wᵀΣw), with any tiny negative rounding of the variance clamped to 0. */
export function portfolioVolatility(model: RiskModel, w: Float64Array, scratchN: Float64Array, scratchK?: Float64Array): number {
  return Math.sqrt(Math.max(0, portfolioVariance(model, w, scratchN, scratchK)));
}

/**
 * out ← Euler risk contributions RC_i = w_i(Σw)_i/σ (Tasche 2008); returns σ. `out` doubles as
 * the Σw buffer, so nothing is allocated. With σ = 0 every contribution is 0.
 */
export function riskContributionsInto(model: RiskModel, w: Float64Array, out: Float64Array, scratchK?: Float64Array): number {
  const n = model.n;
  const variance = varianceContributionsInto(model, w, out, scratchK);
  const sigma = Math.sqrt(Math.max(0, variance));
  const scale = sigma > 0 ? 1 / sigma : 0;
  for (let i = 0; i < n; i++) out[i] *= scale;
  return sigma;
}

/**
 * out ← risk contribution fractions RC_i/σ = w_i(Σw)_i/wᵀΣw, which sum to 1; returns σ.
 * Undefined (NaN) when σ = 0.
 */
export function riskContributionSharesInto(model: RiskModel, w: Float64Array, out: Float64Array, scratchK?: Float64Array): number {
  const n = model.n;
  const variance = varianceContributionsInto(model, w, out, scratchK);
  const scale = variance > 0 ? 1 / variance : NaN;
  for (let i = 0; i < n; i++) out[i] *= scale;
  return Math.sqrt(Math.max(0, variance));
}

/** out ← w ∘ (Σw), the variance contributions (they sum to wᵀΣw); returns wᵀΣw (unclamped). */
function varianceContributionsInto(model: RiskModel, w: Float64Array, out: Float64Array, scratchK?: Float64Array): number {
  covTimes(model, w, out, scratchK);
  let variance = 0;
  for (let i = 0; i < model.n; i++) {
    out[i] *= w[i];
    variance += out[i];
  }
  return variance;
}

/** σ_i = √Σ_ii into `out` (O(NK²) for a factor model: compute once per model, not per portfolio). */
export function assetVolatilitiesInto(model: RiskModel, out: Float64Array): Float64Array {
  assetVariances(model, out);
  for (let i = 0; i < model.n; i++) out[i] = Math.sqrt(Math.max(0, out[i]));
  return out;
}

/** Diversification ratio Σ w_i σ_i / σ(w) (Choueifaty & Coignard 2008) with precomputed asset vols. */
export function diversificationRatioOf(
  model: RiskModel,
  w: Float64Array,
  assetVols: Float64Array,
  scratchN: Float64Array,
  scratchK?: Float64Array,
): number {
  let weightedVol = 0;
  for (let i = 0; i < model.n; i++) weightedVol += w[i] * assetVols[i];
  return weightedVol / portfolioVolatility(model, w, scratchN, scratchK);
}

/** Effective number of holdings 1/Σw_i² (inverse Herfindahl index; N for 1/N, 1 for a single asset). */
export function effectiveHoldings(w: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < w.length; i++) s += w[i] * w[i];
  return 1 / s;
}

/** Factor variance wᵀBFBᵀw = yᵀFy with y = Bᵀw; `scratchK` (length ≥ k) avoids allocation. O(NK + K²). */
export function factorVarianceOf(model: FactorRiskModel, w: Float64Array, scratchK: Float64Array = new Float64Array(model.k)): number {
  const { n, k } = model;
  const y = scratchK;
  for (let a = 0; a < k; a++) y[a] = 0;
  for (let i = 0; i < n; i++) for (let a = 0; a < k; a++) y[a] += model.loadings[i * k + a] * w[i];
  let v = 0;
  for (let a = 0; a < k; a++) {
    let fa = 0;
    for (let c = 0; c < k; c++) fa += model.factorCov[a * k + c] * y[c];
    v += y[a] * fa;
  }
  return v;
}

/** Specific variance wᵀDw = Σ d_i w_i². */
export function specificVarianceOf(model: FactorRiskModel, w: Float64Array): number {
  let v = 0;
  for (let i = 0; i < model.n; i++) v += model.specificVar[i] * w[i] * w[i];
  return v;
}

/** Largest N for which decomposeRisk computes the effective number of bets by default (O(N³) eigen-decomposition; a factor model is expanded to N×N). */
export const EFFECTIVE_BETS_MAX_DENSE_N = 600;

/**
 * Effective number of bets (Meucci 2009): exp of the entropy of the variance shares carried by
 * the principal components of Σ. Eigen-decomposition by ml-matrix (O(N³); reporting only, never
 * in the draw loop). Eigenvalues that rounding made slightly negative are treated as 0.
 * Note: with repeated eigenvalues the principal components, hence the value, are not unique.
 */
export function effectiveNumberOfBets(model: RiskModel, w: ArrayLike<number>): number {
  const n = model.n;
  const cov = toDenseCovariance(model);
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(cov.subarray(i * n, (i + 1) * n)));
  const evd = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const values = evd.realEigenvalues;
  const vectors = evd.eigenvectorMatrix;
  const shares = new Float64Array(n);
  let total = 0;
  for (let c = 0; c < n; c++) {
    let proj = 0;
    for (let i = 0; i < n; i++) proj += vectors.get(i, c) * w[i];
    const share = proj * proj * Math.max(0, values[c]);
    shares[c] = share;
    total += share;
  }
  // total = wᵀΣw up to rounding (the eigenvectors are orthonormal).
  let entropy = 0;
  for (let c = 0; c < n; c++) {
    const p = shares[c] / total;
    if (p > 0) entropy -= p * Math.log(p);
  }
  return Math.exp(entropy);
}

export interface RiskDecomposition {
  readonly variance: number;
  readonly volatility: number;
  /** ∂σ/∂w_i = (Σw)_i/σ. */
  readonly marginalRisk: Float64Array;
  /** Euler contributions RC_i = w_i(Σw)_i/σ, summing to σ. */
  readonly contributions: Float64Array;
  /** RC_i/σ, summing to 1. */
  readonly contributionShares: Float64Array;
  readonly diversificationRatio: number;
  readonly effectiveHoldings: number;
  /** Undefined when N > EFFECTIVE_BETS_MAX_DENSE_N (unless requested) or when turned off. */
  readonly effectiveBets?: number;
  /** Present for factor models: wᵀBFBᵀw, wᵀDw and the factor share of variance. */
  readonly factorSplit?: { readonly factorVariance: number; readonly specificVariance: number; readonly factorShare: number };
}

export interface DecomposeRiskOptions {
  /** Compute the effective number of bets (O(N³) eigen-decomposition). Default true when affordable. */
  readonly effectiveBets?: boolean;
}

/** Full risk report for one portfolio (allocates; for the base case and reporting). */
export function decomposeRisk(model: RiskModel, w: ArrayLike<number>, options: DecomposeRiskOptions = {}): RiskDecomposition {
  const n = model.n;
  if (w.length !== n) throw new RangeError(`weights have length ${w.length}, the risk model has ${n} assets`);
  const weights = Float64Array.from(w);
  const scratchK = new Float64Array(model.kind === 'factor' ? 2 * model.k : 2);
  const marginalRisk = new Float64Array(n);
  covTimes(model, weights, marginalRisk, scratchK);
  let variance = 0;
  for (let i = 0; i < n; i++) variance += weights[i] * marginalRisk[i];
  const volatility = Math.sqrt(Math.max(0, variance));
  const contributions = new Float64Array(n);
  const contributionShares = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    marginalRisk[i] /= volatility;
    contributions[i] = weights[i] * marginalRisk[i];
    contributionShares[i] = contributions[i] / volatility;
  }
  const vols = assetVolatilitiesInto(model, new Float64Array(n));
  let weightedVol = 0;
  for (let i = 0; i < n; i++) weightedVol += weights[i] * vols[i];
  const wantBets = options.effectiveBets ?? n <= EFFECTIVE_BETS_MAX_DENSE_N;
  const result: RiskDecomposition = {
    variance,
    volatility,
    marginalRisk,
    contributions,
    contributionShares,
    diversificationRatio: weightedVol / volatility,
    effectiveHoldings: effectiveHoldings(weights),
    ...(wantBets ? { effectiveBets: effectiveNumberOfBets(model, weights) } : {}),
  };
  if (model.kind !== 'factor') return result;
  const factorVariance = factorVarianceOf(model, weights, scratchK);
  const specificVariance = specificVarianceOf(model, weights);
  return { ...result, factorSplit: { factorVariance, specificVariance, factorShare: factorVariance / (factorVariance + specificVariance) } };
}
