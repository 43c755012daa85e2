import { RISKMETRICS_DAILY_DECAY } from '../estimate/ewma.js';
import { canonicalJson } from '../schema/canonical-json.js';
import { returnHistoryFromRows } from '../estimate/history.js';
import { nearestPsd } from '../estimate/psd.js';
import { choleskyDecompose } from '../linalg/dense.js';
import type { RiskModel } from '../linalg/risk-model.js';
import type { ConstraintSet, GroupConstraint } from '../optimize/types.js';
import { expandBound } from '../schema/bounds.js';
import type { MethodSpec, Proposal } from '../schema/proposal.js';
import type { Warning } from '../schema/validate.js';
import { estimateFromHistory, type EstimationPlan, type HistoryData } from './estimate-inputs.js';

/**
 * Risk aversion used for mean-variance in `compare` when the proposal's own method has none
 * (λ = 4 sits in the 2–10 range usually quoted for a balanced investor; common practice), and for
 * the certainty-equivalent score of methods that have no risk aversion of their own.
 */
export const DEFAULT_RISK_AVERSION = 4;

/** Risk aversion split into factor and specific parts (equal when a single λ is given). */
export interface RiskAversion {
  readonly factor: number;
  readonly specific: number;
}

/** Everything the optimisers and the stress loop need, in per-period Float64Array form. */
export interface PreparedProblem {
  readonly assets: readonly string[];
  readonly n: number;
  readonly periodsPerYear: number;
  /** Base per-period expected returns (the views' means when views are given). */
  readonly mean: Float64Array;
  /** Base risk model (dense Σ or factor model). */
  readonly riskModel: RiskModel;
  /** Return history and how it is estimated (history inputs only). */
  readonly history?: HistoryData;
  readonly plan?: EstimationPlan;
  /** Standard errors of the views, per period (views only). */
  readonly viewStdErr?: Float64Array;
  /** T: observations behind the inputs. */
  readonly observations: number;
  readonly constraints: ConstraintSet;
  readonly proposalWeights: Float64Array;
  /** The proposal's method first, then the other methods to compare, without duplicates. */
  readonly methods: readonly MethodSpec[];
  readonly riskFreePerPeriod: number;
  /** Risk aversion for the certainty-equivalent score (DeMiguel, Garlappi & Uppal 2009). */
  readonly scoringRiskAversion: RiskAversion;
  /** Estimator notes for the base inputs (shrinkage…). */
  readonly estimationNotes: Record<string, number>;
  readonly warnings: Warning[];
}

export function riskAversionOf(spec: MethodSpec & { name: 'mean-variance' }): RiskAversion {
  const r = spec.riskAversion;
  return typeof r === 'number' ? { factor: r, specific: r } : r;
}

/** The six methods with their defaults, mean-variance taking the proposal's risk aversion if it has one. */
export function defaultComparison(proposalMethod: MethodSpec): MethodSpec[] {
  const riskAversion = proposalMethod.name === 'mean-variance' ? proposalMethod.riskAversion : DEFAULT_RISK_AVERSION;
  return [
    { name: 'mean-variance', riskAversion },
    { name: 'minimum-variance' },
    { name: 'kelly', fraction: 1 },
    { name: 'risk-parity' },
    { name: 'equal-weight' },
    { name: 'inverse-volatility' },
  ];
}

/**
 * One key per distinct method: defaults filled in (Kelly's fraction 1, a risk aversion split into
 * equal factor and specific parts is the single number) and keys sorted at every depth, so nested
 * settings such as riskAversion {factor, specific} take part in the comparison.
 */
export function canonicalSpec(spec: MethodSpec): string {
  if (spec.name === 'kelly') return canonicalJson({ name: 'kelly', fraction: spec.fraction ?? 1 });
  if (spec.name === 'mean-variance' && typeof spec.riskAversion === 'object' && spec.riskAversion.factor === spec.riskAversion.specific) {
    return canonicalJson({ name: spec.name, riskAversion: spec.riskAversion.factor });
  }
  return canonicalJson(spec);
}

export function methodList(proposal: Proposal): MethodSpec[] {
  const seen = new Set<string>();
  const out: MethodSpec[] = [];
  for (const spec of [proposal.method, ...(proposal.compare ?? defaultComparison(proposal.method))]) {
    const key = canonicalSpec(spec);
    if (seen.has(key)) continue;
    seen.add(key);
    out.push(spec);
  }
  return out;
}

export function buildConstraintSet(proposal: Proposal): ConstraintSet {
  const n = proposal.assets.length;
  const c = proposal.constraints;
  const longOnly = c?.longOnly ?? true;
  const index = new Map(proposal.assets.map((a, i) => [a, i] as const));
  const groups: GroupConstraint[] = (c?.groups ?? []).map((g) => ({
    name: g.name,
    members: Int32Array.from(g.assets.map((a) => index.get(a) ?? -1)),
    min: g.min ?? -Infinity,
    max: g.max ?? Infinity,
  }));
  return {
    n,
    lower: expandBound(c?.lower, n, longOnly ? 0 : -Infinity),
    upper: expandBound(c?.upper, n, Infinity),
    budget: c?.budget ?? 1,
    groups,
  };
}

function denseFromRows(rows: readonly (readonly number[])[]): Float64Array {
  const n = rows.length;
  const out = new Float64Array(n * n);
  rows.forEach((r, i) => out.set(r, i * n));
  return out;
}

/** Turns a validated proposal into the base problem. */
export function prepareProblem(proposal: Proposal, warnings: Warning[] = []): PreparedProblem {
  const n = proposal.assets.length;
  const inputs = proposal.inputs;
  let mean: Float64Array;
  let riskModel: RiskModel;
  let history: HistoryData | undefined;
  let plan: EstimationPlan | undefined;
  let observations: number;
  let estimationNotes: Record<string, number> = {};
  if ('returns' in inputs) {
    const est = proposal.estimation;
    plan = {
      covariance:
        est?.covariance === 'ewma'
          ? { method: 'ewma', decay: est.ewmaDecay ?? RISKMETRICS_DAILY_DECAY }
          : { method: est?.covariance ?? 'sample' },
      factorModel: est?.factorModel ?? 'none',
      pcaFactors: est?.pcaFactors,
    };
    history = {
      assets: returnHistoryFromRows(inputs.returns),
      factors: inputs.factors ? returnHistoryFromRows(inputs.factors.returns) : undefined,
      factorNames: inputs.factors?.names,
    };
    const base = estimateFromHistory(history, plan);
    mean = base.mean;
    riskModel = base.riskModel;
    estimationNotes = base.notes;
    observations = inputs.returns.length;
  } else if ('covariance' in inputs) {
    mean = Float64Array.from(inputs.mean);
    let cov = denseFromRows(inputs.covariance);
    // Validation let a non-PSD matrix through only when the caller opted in to repair (and warned).
    // A matrix with a Cholesky factor is positive definite and needs nothing; otherwise one
    // eigendecomposition (counted by the work model) gives the nearest PSD matrix.
    if (proposal.estimation?.repairCovariance && choleskyDecompose(Float64Array.from(cov), n) >= 0) cov = nearestPsd(cov, n).matrix;
    riskModel = { kind: 'dense', n, cov };
    observations = inputs.observations;
  } else {
    const fm = inputs.factorModel;
    const k = fm.factors.length;
    const loadings = new Float64Array(n * k);
    fm.loadings.forEach((r, i) => loadings.set(r, i * k));
    mean = Float64Array.from(inputs.mean);
    riskModel = {
      kind: 'factor',
      n,
      k,
      factorNames: fm.factors,
      loadings,
      factorCov: denseFromRows(fm.factorCovariance),
      specificVar: Float64Array.from(fm.specificVariance),
    };
    observations = inputs.observations;
  }
  let viewStdErr: Float64Array | undefined;
  if (proposal.views) {
    mean = Float64Array.from(proposal.views.mean);
    viewStdErr = Float64Array.from(proposal.views.stdErr);
  }
  const methods = methodList(proposal);
  const mv = methods.find((m): m is MethodSpec & { name: 'mean-variance' } => m.name === 'mean-variance');
  const scoringRiskAversion = mv ? riskAversionOf(mv) : { factor: DEFAULT_RISK_AVERSION, specific: DEFAULT_RISK_AVERSION };
  return {
    assets: proposal.assets,
    n,
    periodsPerYear: inputs.periodsPerYear,
    mean,
    riskModel,
    history,
    plan,
    viewStdErr,
    observations,
    constraints: buildConstraintSet(proposal),
    proposalWeights: Float64Array.from(proposal.weights),
    methods,
    riskFreePerPeriod: proposal.riskFreeRate / inputs.periodsPerYear,
    scoringRiskAversion,
    estimationNotes,
    warnings: [...warnings],
  };
}
