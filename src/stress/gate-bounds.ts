import type { PolicyRule } from '../schema/proposal.js';
import { sdStdErrOfStrided, stridedMoments } from '../statistics/batch-means.js';
import { maxSdBound } from '../statistics/max-sd-bound.js';
import { BAND_EDGE_TOLERANCE, outsideBandCounts, outsideBandShareBound, type OutsideBandCounts } from '../statistics/stability.js';
import { quantileBoundOfStrided } from '../statistics/quantile-bound.js';
import type { StressRun } from './paired.js';

/** Figures the gate judges by a simultaneous bound over the assets rather than value ∓ z·se. */
export type SimultaneousMetric = Extract<PolicyRule['metric'], 'outside-band-share' | 'max-weight-sd'>;

export function isSimultaneousMetric(metric: PolicyRule['metric']): metric is SimultaneousMetric {
  return metric === 'outside-band-share' || metric === 'max-weight-sd';
}

/**
 * Percentile figures the gate bounds by order statistics of the draws (quantile-bound.ts): the
 * median turnover, whose draws pile up at corner portfolios (atoms and gaps), so value ∓ z·se
 * failed a min rule at the true median 16 % of the time (demo, 200 draws); and the volatility
 * band width p95 − p05, whose sample value is biased low at few draws (by 0.46 se on average at
 * 500 draws on D1), so value + z·se failed a min rule at the true width 15 % of the time.
 */
export type PercentileMetric = Extract<PolicyRule['metric'], 'turnover-from-proposal.p50' | 'volatility-band-width'>;

export function isPercentileMetric(metric: PolicyRule['metric']): metric is PercentileMetric {
  return metric === 'turnover-from-proposal.p50' || metric === 'volatility-band-width';
}

/** The band of the volatility band width: its low and high percentiles. */
const BAND_LOW = 0.05;
const BAND_HIGH = 0.95;

/** Figures with a bound from the run's per-draw data. */
export type DrawBoundMetric = SimultaneousMetric | PercentileMetric;

export function hasDrawBound(metric: PolicyRule['metric']): metric is DrawBoundMetric {
  return isSimultaneousMetric(metric) || isPercentileMetric(metric);
}

/** A one-sided confidence bound of a figure, and how many assets it counts (for the rule's sentence). */
export interface FigureBound {
  readonly bound: number;
  /** outside-band-share: assets confidently outside (lower) or not confidently inside (upper), of `assets`. */
  readonly outside?: number;
  readonly assets?: number;
}

/**
 * The bound of one method's figure at level α: side 'lower' lies below the figure's limit (its value
 * with infinitely many draws) with probability ≥ 1 − α, 'upper' above it. Undefined when not
 * estimable (fewer than 2 successful draws). `methodIndex` indexes the report's methods.
 */
export type FigureBoundSource = (metric: DrawBoundMetric, methodIndex: number, side: 'lower' | 'upper', alpha: number) => FigureBound | undefined;

/** The per-draw statistics one method's bounds need (computed once per method, on first use). */
interface MethodStatistics {
  readonly counts: OutsideBandCounts;
  readonly sd: Float64Array;
  readonly sdStdErr: Float64Array;
}

/**
 * Bounds from a finished run's per-draw data (stability.ts for the outside-band share,
 * max-sd-bound.ts for the largest weight sd, quantile-bound.ts for the median turnover and the
 * volatility band width). Every input is a sum or moment over the per-draw
 * slots, so ranges of draws computed apart (threads, shards) give the same bounds.
 */
export function figureBoundsOf(run: StressRun): FigureBoundSource {
  const cache = new Map<number, MethodStatistics>();
  const statistics = (k: number): MethodStatistics | undefined => {
    const known = cache.get(k);
    if (known) return known;
    const method = run.acc.methods[k];
    if (!method) return undefined;
    const n = run.plan.problem.n;
    const draws = run.plan.draws;
    const rows = method.weights.rows();
    const sd = new Float64Array(n);
    const sdStdErr = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      sd[i] = stridedMoments(rows, i, n, draws).sd;
      sdStdErr[i] = sdStdErrOfStrided(rows, i, n, draws);
    }
    const made = { counts: outsideBandCounts(rows, draws, n, run.plan.problem.proposalWeights, BAND_EDGE_TOLERANCE), sd, sdStdErr };
    cache.set(k, made);
    return made;
  };
  let scratch: Float64Array | undefined;
  return (metric, k, side, alpha) => {
    const draws = run.plan.draws;
    if (metric === 'turnover-from-proposal.p50') {
      const method = run.acc.methods[k];
      if (!method) return undefined;
      scratch ??= new Float64Array(draws);
      const bound = quantileBoundOfStrided(method.turnoverFromProposal.slots(), 0, 1, draws, 0.5, side, alpha, scratch);
      return bound === undefined ? undefined : { bound };
    }
    if (metric === 'volatility-band-width') {
      // The proposal's own figure (methodIndex is ignored). Each end at α/2 (Bonferroni): both
      // hold together with chance ≥ 1 − α, and then the width lies between the differences.
      scratch ??= new Float64Array(draws);
      const column = run.acc.proposalVolatility.slots();
      const high = quantileBoundOfStrided(column, 0, 1, draws, BAND_HIGH, side, alpha / 2, scratch);
      const low = quantileBoundOfStrided(column, 0, 1, draws, BAND_LOW, side === 'lower' ? 'upper' : 'lower', alpha / 2, scratch);
      return high === undefined || low === undefined ? undefined : { bound: high - low };
    }
    const s = statistics(k);
    if (!s) return undefined;
    if (metric === 'outside-band-share') return outsideBandShareBound(s.counts, side, alpha);
    const b = maxSdBound(s.sd, s.sdStdErr, side, alpha);
    return b === undefined ? undefined : { bound: b.bound };
  };
}
