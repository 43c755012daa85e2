import type { MethodName, PolicyRule } from '../schema/proposal.js';
import { batchCount, batchStart, stridedMoments } from './batch-means.js';
import type { StressAccumulators, StressPlan } from './engine.js';
import { quantileSorted } from './quantiles.js';
import { BAND_EDGE_TOLERANCE, outsideBandShareOver } from './stability.js';

/** A finished stress run with its per-draw data, for paired comparisons. */
export interface StressRun {
  readonly plan: StressPlan;
  readonly acc: StressAccumulators;
}

/**
 * A gate metric recomputed inside each contiguous batch of draws (the batches of the batch-means
 * errors). Undefined for metrics without a per-batch form here (mean-driven share, and the exact
 * forecast break-even, whose error is 0).
 */
export function metricByBatch(run: StressRun, metric: PolicyRule['metric'], method: MethodName): Float64Array | undefined {
  const { plan, acc } = run;
  const k = plan.problem.methods.findIndex((m) => m.name === method);
  if (k < 0) return undefined;
  const draws = plan.draws;
  const m = batchCount(draws);
  if (m < 2) return undefined;
  const n = plan.problem.n;
  const scratch = new Float64Array(draws);
  const finiteSorted = (values: Float64Array, from: number, to: number): Float64Array => {
    let count = 0;
    for (let b = from; b < to; b++) if (Number.isFinite(values[b])) scratch[count++] = values[b];
    return scratch.subarray(0, count).sort();
  };
  const statistic = (from: number, to: number): number => {
    switch (metric) {
      case 'turnover-from-proposal.p50': {
        const sorted = finiteSorted(acc.methods[k].turnoverFromProposal.slots(), from, to);
        return quantileSorted(sorted, sorted.length, 0.5);
      }
      case 'turnover-from-proposal.mean': {
        const sorted = finiteSorted(acc.methods[k].turnoverFromProposal.slots(), from, to);
        return stridedMoments(sorted, 0, 1, sorted.length).mean;
      }
      case 'volatility-band-width': {
        const sorted = finiteSorted(acc.proposalVolatility.slots(), from, to);
        return quantileSorted(sorted, sorted.length, 0.95) - quantileSorted(sorted, sorted.length, 0.05);
      }
      case 'outside-band-share':
        return outsideBandShareOver(acc.methods[k].weights.rows(), n, plan.problem.proposalWeights, BAND_EDGE_TOLERANCE, from, to, scratch);
      case 'max-weight-sd': {
        const rows = acc.methods[k].weights.rows();
        let max = 0;
        for (let i = 0; i < n; i++) {
          let count = 0;
          for (let b = from; b < to; b++) if (Number.isFinite(rows[b * n + i])) scratch[count++] = rows[b * n + i];
          if (count >= 2) max = Math.max(max, stridedMoments(scratch, 0, 1, count).sd);
        }
        return max;
      }
      case 'mean-driven-share':
      case 'forecast-break-even-std-errs':
        return Number.NaN;
    }
  };
  // Break-even shifts are exact (no draws): the difference of two runs has no Monte Carlo error.
  if (metric === 'mean-driven-share' || metric === 'forecast-break-even-std-errs') return undefined;
  const out = new Float64Array(m);
  for (let b = 0; b < m; b++) out[b] = statistic(batchStart(draws, m, b), batchStart(draws, m, b + 1));
  return out;
}

/**
 * Monte Carlo standard error of (candidate − baseline) for a metric, from the batch-by-batch
 * differences of two runs that share their random numbers (same seed and draw count: common
 * random numbers, so draw b of both runs resamples the same rows or the same noise). The paired
 * differences cancel the noise the two runs share, which is the point of gating on a baseline.
 * Undefined when the runs cannot be paired (different draw counts or seeds, or no per-batch form).
 */
export function pairedStdErr(candidate: StressRun, baseline: StressRun, metric: PolicyRule['metric'], method: MethodName): number | undefined {
  if (candidate.plan.draws !== baseline.plan.draws || String(candidate.plan.seed) !== String(baseline.plan.seed)) return undefined;
  const a = metricByBatch(candidate, metric, method);
  const b = metricByBatch(baseline, metric, method);
  if (!a || !b) return undefined;
  const diff = new Float64Array(a.length);
  let usable = 0;
  for (let i = 0; i < a.length; i++) {
    const d = a[i] - b[i];
    if (Number.isFinite(d)) diff[usable++] = d;
  }
  if (usable < 2) return undefined;
  return stridedMoments(diff, 0, 1, usable).stdErr;
}
