import type { MethodSpec, Proposal } from '../schema/proposal.js';

/**
 * The shape of a request: every count the cost models read, taken from the validated JSON
 * before anything is computed (no matrix is touched). Costs are pure functions of this shape,
 * so a refusal (413) is deterministic and comes before the expensive steps.
 */
export type Job = 'validate' | 'optimize' | 'stress' | 'check';

export interface RequestShape {
  readonly n: number;
  /** History rows T (0 for moments inputs). */
  readonly rows: number;
  /** Factors of a supplied, regression or PCA factor model (0 for a dense covariance). */
  readonly factors: number;
  readonly inputKind: 'history' | 'dense-moments' | 'factor-moments';
  readonly covarianceEstimator: 'sample' | 'ledoit-wolf' | 'ledoit-wolf-constant-correlation' | 'ewma';
  readonly factorModel: 'none' | 'regression' | 'pca';
  /** Dense moments with repairCovariance: an eigendecomposition may be needed. */
  readonly repair: boolean;
  readonly groups: number;
  /** Σ over groups of their member counts. */
  readonly groupMemberships: number;
  /** Numbers the caller sent (inputs, weights, bounds, views…). */
  readonly inputNumbers: number;
  /** Characters in all asset ids (they come back several times in the response). */
  readonly assetIdChars: number;
  /** The distinct methods the request solves, proposal's method first. */
  readonly methods: readonly MethodSpec[];
  readonly draws: number;
  readonly scheme: 'stationary-bootstrap' | 'iid-bootstrap' | 'parametric';
  /**
   * The dense covariance is (or may be) singular: a sample or EWMA estimate from no more rows than
   * assets, a repaired matrix (eigenvalues clipped at 0), or a supplied one that has no Cholesky
   * factor (found by validation's PSD test). Active-set solves then run partly on a ridge, which
   * the work model charges (work-model.ts, singularQpUnits).
   */
  readonly singular: boolean;
  /**
   * Every draw's covariance is (or is likely) singular though the base one may not be: parametric
   * draws of dense moments from no more observations than assets (Wishart with T − 1 < N degrees
   * of freedom), and bootstrap draws of a sample or EWMA history whose resampled T rows hold about
   * (1 − 1/e)·T distinct ones, no more than N. The per-draw (warm) solves are charged as singular;
   * the base optima and optimize are not.
   */
  readonly singularDraws: boolean;
  /** Kelly maximises expected log growth over the history's scenarios (not the quadratic approximation). */
  readonly scenarioKelly: boolean;
}

/**
 * Expected share of distinct rows in a bootstrap resample of T rows, 1 − (1 − 1/T)^T → 1 − 1/e ≈
 * 0.632 (Efron & Tibshirani 1993, the ".632" of the .632 estimator; from memory). The same for the
 * stationary bootstrap to first order: a row is missed by each of its ~T/L blocks of mean length L
 * with probability ≈ 1 − L/T, so by all of them with ≈ 1/e.
 */
export const BOOTSTRAP_DISTINCT_SHARE = 1 - Math.exp(-1);

/** Default draws when neither the proposal nor the caller sets them. */
export const DEFAULT_DRAWS = 500;

/** Counts the request's shape. `methods` is the deduplicated list (problem.ts methodList). */
export function requestShape(proposal: Proposal, methods: readonly MethodSpec[], drawsOverride?: number, knownSingular = false): RequestShape {
  const inputs = proposal.inputs;
  const n = proposal.assets.length;
  const history = 'returns' in inputs;
  const estimation = proposal.estimation;
  const factorModel = history ? (estimation?.factorModel ?? 'none') : 'none';
  let factors = 0;
  let inputNumbers = proposal.weights.length + n;
  if ('factorModel' in inputs) {
    const k = inputs.factorModel.factors.length;
    factors = k;
    inputNumbers += n * k + k * k + n;
  } else if ('covariance' in inputs) {
    inputNumbers += n * n;
  } else {
    inputNumbers += inputs.returns.length * n + (inputs.factors ? inputs.factors.returns.length * inputs.factors.names.length : 0);
    if (factorModel === 'regression') factors = inputs.factors?.names.length ?? 0;
    if (factorModel === 'pca') factors = estimation?.pcaFactors ?? 1;
  }
  if (proposal.views) inputNumbers += 2 * n;
  const c = proposal.constraints;
  if (Array.isArray(c?.lower)) inputNumbers += c.lower.length;
  if (Array.isArray(c?.upper)) inputNumbers += c.upper.length;
  const groups = c?.groups ?? [];
  const groupMemberships = groups.reduce((total, g) => total + g.assets.length, 0);
  const scheme = proposal.resampling?.scheme ?? (history ? 'stationary-bootstrap' : 'parametric');
  return {
    n,
    rows: history ? inputs.returns.length : 0,
    factors,
    inputKind: history ? 'history' : 'covariance' in inputs ? 'dense-moments' : 'factor-moments',
    covarianceEstimator: history ? (estimation?.covariance ?? 'sample') : 'sample',
    factorModel,
    repair: 'covariance' in inputs && (estimation?.repairCovariance ?? false),
    groups: groups.length,
    groupMemberships,
    inputNumbers,
    assetIdChars: proposal.assets.reduce((total, a) => total + a.length, 0),
    methods,
    draws: drawsOverride ?? proposal.resampling?.draws ?? DEFAULT_DRAWS,
    scheme,
    scenarioKelly: history && scheme !== 'parametric' && methods.some((m) => m.name === 'kelly'),
    singular:
      knownSingular ||
      ('covariance' in inputs && (estimation?.repairCovariance ?? false)) ||
      (history && factorModel === 'none' && ['sample', 'ewma'].includes(estimation?.covariance ?? 'sample') && inputs.returns.length <= n),
    singularDraws:
      ('covariance' in inputs && scheme === 'parametric' && inputs.observations <= n) ||
      (history && scheme !== 'parametric' && factorModel === 'none' && ['sample', 'ewma'].includes(estimation?.covariance ?? 'sample') && BOOTSTRAP_DISTINCT_SHARE * inputs.returns.length <= n),
  };
}
