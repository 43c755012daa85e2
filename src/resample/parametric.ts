import { choleskyPsd, trace } from '../linalg/dense.js';
import { TOLERANCES } from '../schema/limits.js';
import type { DenseRiskModel, FactorRiskModel, RiskModel } from '../linalg/risk-model.js';
import { drawCorrelatedNormal, drawFactorNormal, drawIndependentNormal } from './normal.js';
import { createDrawStream, STREAM_PURPOSE, type RandomStream, type Seed } from './streams.js';
import { drawScaledChiSquare, drawWishart } from './wishart.js';

/**
 * The parametric scheme for moments inputs: the sampling laws of the estimates from T normal
 * observations, centred on the base inputs.
 *   μ_b ~ N(μ, Σ/T)                            (x̄ of T iid N(μ, Σ) rows)
 *   μ_b ~ N(μ_view, diag(stdErr²))             (views carry their own standard errors)
 *   Σ_b ~ Wishart(T−1, Σ/(T−1))                ((T−1)S ~ Wishart(T−1, Σ); E[Σ_b] = Σ)
 *   factor model: F_b ~ Wishart(T−1, F/(T−1)), D_b,i ~ D_i·χ²_{T−1}/(T−1), B kept at base
 * (REFERENCES.md, "Sampling"; x̄ and S are independent under normality, so the mean and the
 * covariance noise come from separate streams.)
 *
 * Common random numbers: draw b's mean noise always comes from stream (seed, b, 'mean') and its
 * covariance noise from (seed, b, 'cov'). The joint channel uses both draws; the mean-only
 * channel uses the same μ_b with Σ at base; the covariance-only channel the same Σ_b with μ at
 * base — so the three channels see identical random numbers.
 */

interface ParametricBaseCommon {
  readonly n: number;
  /** T, the number of observations behind the estimates (≥ 2). */
  readonly observations: number;
  /** Centre of the mean draws: the estimated mean, or the views' means. */
  readonly mean: Float64Array;
  /** When present (views), μ_b ~ N(mean, diag(meanStdErr²)) instead of N(mean, Σ/T). */
  readonly meanStdErr: Float64Array | undefined;
}

export interface DenseParametricBase extends ParametricBaseCommon {
  readonly kind: 'dense';
  readonly risk: DenseRiskModel;
  /** L with L Lᵀ = Σ (n×n, lower), computed once. */
  readonly covLower: Float64Array;
}

export interface FactorParametricBase extends ParametricBaseCommon {
  readonly kind: 'factor';
  readonly k: number;
  readonly risk: FactorRiskModel;
  /** L_F with L_F L_Fᵀ = F (k×k, lower), computed once. */
  readonly factorCovLower: Float64Array;
}

export type ParametricBase = DenseParametricBase | FactorParametricBase;

export interface ParametricBaseInput {
  readonly mean: Float64Array;
  readonly risk: RiskModel;
  readonly observations: number;
  /** Views' standard errors (same length as mean): replaces Σ/T as the mean's noise. */
  readonly meanStdErr?: Float64Array;
}

/**
 * The negative pivots a validated matrix may show: validation accepts a covariance whose smallest
 * eigenvalue is ≥ −TOLERANCES.psd·max(1, λ₁) (matrix-checks.ts), and the trace bounds λ₁ from
 * above, so this never rejects what validation accepted. Without it a supplied singular Σ that
 * validation and optimize accept failed the stress with a 422 (pivot −8e-12 at N = 150).
 */
function validatedNegativeTolerance(a: Float64Array, n: number): number {
  return TOLERANCES.psd * Math.max(1, trace(a, n));
}

/** Factor the base covariance once per request. Throws RangeError for T < 2 or a non-PSD Σ / F. */
export function prepareParametricBase(input: ParametricBaseInput): ParametricBase {
  const { mean, risk, observations } = input;
  if (!Number.isInteger(observations) || observations < 2) {
    throw new RangeError(`observations must be an integer ≥ 2, got ${observations}`);
  }
  if (mean.length !== risk.n) throw new RangeError(`mean has ${mean.length} entries, risk model has ${risk.n} assets`);
  const meanStdErr = input.meanStdErr;
  if (meanStdErr !== undefined && meanStdErr.length !== risk.n) {
    throw new RangeError(`meanStdErr has ${meanStdErr.length} entries, expected ${risk.n}`);
  }
  if (risk.kind === 'dense') {
    return { kind: 'dense', n: risk.n, observations, mean, meanStdErr, risk, covLower: choleskyPsd(risk.cov, risk.n, undefined, validatedNegativeTolerance(risk.cov, risk.n)) };
  }
  return {
    kind: 'factor',
    n: risk.n,
    k: risk.k,
    observations,
    mean,
    meanStdErr,
    risk,
    factorCovLower: choleskyPsd(risk.factorCov, risk.k, undefined, validatedNegativeTolerance(risk.factorCov, risk.k)),
  };
}

/** Scratch buffers for one worker's draws (reuse across draws). */
export interface ParametricScratch {
  readonly z: Float64Array;
  readonly shock: Float64Array;
  readonly matrix: Float64Array;
}

export function createParametricScratch(base: ParametricBase): ParametricScratch {
  const size = base.kind === 'dense' ? base.n : base.k;
  return { z: new Float64Array(size), shock: new Float64Array(size), matrix: new Float64Array(size * size) };
}

/**
 * A risk model shaped like the base whose buffers the draws overwrite: dense → its own n×n
 * `cov`; factor → its own `factorCov` and `specificVar`, sharing the base loadings (B is not
 * resampled).
 */
export function createResampledRiskModel(base: ParametricBase): RiskModel {
  if (base.kind === 'dense') return { kind: 'dense', n: base.n, cov: new Float64Array(base.n * base.n) };
  const r = base.risk;
  return {
    kind: 'factor',
    n: r.n,
    k: r.k,
    factorNames: r.factorNames,
    loadings: r.loadings,
    factorCov: new Float64Array(r.k * r.k),
    specificVar: new Float64Array(r.n),
  };
}

/** out ← μ_b: N(μ, Σ/T) (dense or factor form), or N(μ_view, diag(stdErr²)) for views. */
export function drawParametricMean(
  stream: RandomStream,
  base: ParametricBase,
  out: Float64Array,
  scratch: ParametricScratch,
): Float64Array {
  if (base.meanStdErr !== undefined) return drawIndependentNormal(stream, base.mean, base.meanStdErr, out);
  const scale = 1 / Math.sqrt(base.observations);
  if (base.kind === 'dense') return drawCorrelatedNormal(stream, base.mean, base.covLower, base.n, scale, out, scratch.z);
  const r = base.risk;
  return drawFactorNormal(
    stream,
    base.mean,
    r.loadings,
    base.factorCovLower,
    r.specificVar,
    r.n,
    r.k,
    scale,
    out,
    scratch.z,
    scratch.shock,
  );
}

/**
 * target ← the draw's risk model: Σ_b ~ Wishart(T−1, Σ/(T−1)) for a dense base; for a factor base
 * F_b ~ Wishart(T−1, F/(T−1)) then D_b,i ~ D_i·χ²_{T−1}/(T−1) (in that stream order).
 * `target` must come from createResampledRiskModel(base).
 */
export function drawParametricRiskModel(
  stream: RandomStream,
  base: ParametricBase,
  target: RiskModel,
  scratch: ParametricScratch,
): RiskModel {
  const df = base.observations - 1;
  if (base.kind === 'dense') {
    if (target.kind !== 'dense' || target.n !== base.n) throw new RangeError('target must be a dense model of the base size');
    drawWishart(stream, base.covLower, base.n, df, 1 / df, target.cov, scratch.matrix);
    return target;
  }
  if (target.kind !== 'factor' || target.k !== base.k || target.n !== base.n) {
    throw new RangeError('target must be a factor model of the base shape');
  }
  drawWishart(stream, base.factorCovLower, base.k, df, 1 / df, target.factorCov, scratch.matrix);
  drawScaledChiSquare(stream, base.risk.specificVar, df, target.specificVar);
  return target;
}

/**
 * Draw b of the parametric scheme: μ_b into `meanOut` from stream (seed, b, 'mean') and the risk
 * model into `riskOut` from stream (seed, b, 'cov'). Pass `null` for either to skip it (e.g. a
 * run with only the mean-only channel); skipping one never changes the other.
 */
export function drawParametricInputs(
  seed: Seed,
  draw: number,
  base: ParametricBase,
  meanOut: Float64Array | null,
  riskOut: RiskModel | null,
  scratch: ParametricScratch,
): void {
  if (meanOut !== null) drawParametricMean(createDrawStream(seed, draw, STREAM_PURPOSE.mean), base, meanOut, scratch);
  if (riskOut !== null) drawParametricRiskModel(createDrawStream(seed, draw, STREAM_PURPOSE.cov), base, riskOut, scratch);
}
