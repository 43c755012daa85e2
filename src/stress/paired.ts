import type { MethodSpec, PolicyRule } from '../schema/proposal.js';
import { jackknifeStdErr, stridedMoments } from '../statistics/batch-means.js';
import { percentileCombinationStdErr, sortedDraws } from '../statistics/draw-bootstrap.js';
import type { Seed } from '../resample/streams.js';
import { canonicalJson } from '../schema/canonical-json.js';
import type { StressAccumulators, StressPlan } from './engine.js';
import { maxSdLeader, sdInfluence } from '../statistics/max-sd-error.js';
import { BAND_EDGE_TOLERANCE, outsideBandShareReplicates } from '../statistics/stability.js';

/** A finished stress run with its per-draw data, for paired comparisons. */
export interface StressRun {
  readonly plan: StressPlan;
  readonly acc: StressAccumulators;
}

/**
 * Index of a method in a list of specs by its full spec (name and every parameter: Kelly f = 1
 * and f = ½ are different methods), or −1.
 */
export function methodIndexBySpec(specs: readonly MethodSpec[], spec: MethodSpec): number {
  const key = canonicalJson(spec);
  return specs.findIndex((m) => canonicalJson(m) === key);
}

/**
 * The baseline's counterpart of the candidate's method `spec` (at index `candidateIndex` of the
 * candidate's methods): the same full spec when the baseline has it; otherwise, when `spec` is the
 * candidate's own proposal method (index 0), the baseline's proposal method if it has the same
 * name (a model change such as a new risk aversion is compared with the method it replaces);
 * otherwise the only baseline method of that name. −1 when none, or when several specs share the
 * name and none matches exactly (ambiguous: never guess between Kelly f = 1 and f = ½).
 */
export function counterpartIndex(baseline: readonly MethodSpec[], spec: MethodSpec, candidateIndex: number): number {
  const exact = methodIndexBySpec(baseline, spec);
  if (exact >= 0) return exact;
  if (candidateIndex === 0 && baseline.length > 0 && baseline[0].name === spec.name) return 0;
  const sameName = baseline.flatMap((m, k) => (m.name === spec.name ? [k] : []));
  return sameName.length === 1 ? sameName[0] : -1;
}

/** One percentile of one run's per-draw column, with a coefficient, in a linear combination. */
interface QuantileTerm {
  readonly slots: Float64Array;
  readonly probability: number;
  readonly coefficient: number;
}

/**
 * Standard error of Σ_t c_t·Q_t(p_t), percentiles of columns that may belong to two runs on
 * common random numbers: the paired bootstrap of the draws (percentileCombinationStdErr), with
 * the replicates of the runs' shared seed. Terms on identical columns at the same probability are
 * first merged (their coefficients add), so a figure that no change touches cancels exactly.
 * NaN when a column has fewer than 2 successful draws.
 */
export function quantileCombinationStdErr(input: readonly QuantileTerm[], seed: Seed): number {
  const draws = input[0].slots.length;
  const terms: QuantileTerm[] = [];
  for (const t of input) {
    const same = terms.findIndex((u) => u.probability === t.probability && sameValues(u.slots, t.slots));
    if (same >= 0) terms[same] = { ...terms[same], coefficient: terms[same].coefficient + t.coefficient };
    else terms.push(t);
  }
  const kept = terms.filter((t) => t.coefficient !== 0);
  return percentileCombinationStdErr(
    kept.map((t) => ({ column: sortedDraws(t.slots, 0, 1, draws), probability: t.probability, coefficient: t.coefficient })),
    draws,
    seed,
  );
}

function sameValues(a: Float64Array, b: Float64Array): boolean {
  if (a === b) return true;
  if (a.length !== b.length) return false;
  for (let k = 0; k < a.length; k++) if (!Object.is(a[k], b[k])) return false;
  return true;
}

/** sd/√n of the paired per-draw differences x_b − y_b over draws where both succeeded. */
function pairedMeanStdErr(x: Float64Array, y: Float64Array): number {
  const diff = new Float64Array(x.length);
  let count = 0;
  for (let b = 0; b < x.length; b++) {
    const d = x[b] - y[b];
    if (Number.isFinite(d)) diff[count++] = d;
  }
  return stridedMoments(diff, 0, 1, count).stdErr;
}

/**
 * Per-draw influence values of the sd of the asset with the largest weight sd (max-sd-error.ts,
 * sdInfluence; NaN in failed draws): the delta method's linearisation of the sample sd.
 */
function maxSdInfluence(rows: Float64Array, draws: number, n: number): Float64Array {
  const perAsset = Array.from({ length: n }, (_, i) => ({ ...stridedMoments(rows, i, n, draws), sdStdErr: Number.NaN }));
  const leader = maxSdLeader(perAsset);
  const out = new Float64Array(draws).fill(Number.NaN);
  if (leader >= 0) sdInfluence(rows, draws, n, leader, perAsset[leader], out, Number.NaN);
  return out;
}

/**
 * Monte Carlo standard error of (candidate − baseline) for a metric of one method (the candidate's
 * method with this full spec, and its baseline counterpart, see counterpartIndex), from two runs that share their random numbers (same seed and draw count: common
 * random numbers, so draw b of both runs resamples the same rows or the same noise). Each metric
 * uses the paired form of its own error (see MONTE_CARLO_ERROR_DESCRIPTION): percentiles through
 * a bootstrap that resamples the same draws in both runs, means and sds through per-draw differences of their
 * influence values, the outside-band share through the same bootstrap indices in both runs, the
 * mean-driven share through the jackknife of the difference over the same groups.
 * Undefined when the runs cannot be paired (different draw counts or seeds, a method missing) and
 * NaN when the error cannot be estimated (fewer than 2 paired successful draws).
 */
export function pairedStdErr(candidate: StressRun, baseline: StressRun, metric: PolicyRule['metric'], spec: MethodSpec): number | undefined {
  const draws = candidate.plan.draws;
  if (draws !== baseline.plan.draws || String(candidate.plan.seed) !== String(baseline.plan.seed)) return undefined;
  if (metric === 'volatility-band-width') {
    const a = candidate.acc.proposalVolatility.slots();
    const b = baseline.acc.proposalVolatility.slots();
    return quantileCombinationStdErr(
      [
        { slots: a, probability: 0.95, coefficient: 1 },
        { slots: a, probability: 0.05, coefficient: -1 },
        { slots: b, probability: 0.95, coefficient: -1 },
        { slots: b, probability: 0.05, coefficient: 1 },
      ],
      candidate.plan.seed,
    );
  }
  const ka = methodIndexBySpec(candidate.plan.problem.methods, spec);
  const kb = ka < 0 ? -1 : counterpartIndex(baseline.plan.problem.methods, spec, ka);
  if (ka < 0 || kb < 0) return undefined;
  const ma = candidate.acc.methods[ka];
  const mb = baseline.acc.methods[kb];
  const n = candidate.plan.problem.n;
  switch (metric) {
    case 'turnover-from-proposal.p50':
      return quantileCombinationStdErr(
        [
          { slots: ma.turnoverFromProposal.slots(), probability: 0.5, coefficient: 1 },
          { slots: mb.turnoverFromProposal.slots(), probability: 0.5, coefficient: -1 },
        ],
        candidate.plan.seed,
      );
    case 'turnover-from-proposal.mean':
      return pairedMeanStdErr(ma.turnoverFromProposal.slots(), mb.turnoverFromProposal.slots());
    case 'max-weight-sd': {
      if (baseline.plan.problem.n !== n) return undefined;
      return pairedMeanStdErr(maxSdInfluence(ma.weights.rows(), draws, n), maxSdInfluence(mb.weights.rows(), draws, baseline.plan.problem.n));
    }
    case 'outside-band-share': {
      const seed = candidate.plan.seed;
      const a = outsideBandShareReplicates(ma.weights.rows(), draws, n, candidate.plan.problem.proposalWeights, BAND_EDGE_TOLERANCE, seed);
      const b = outsideBandShareReplicates(mb.weights.rows(), draws, baseline.plan.problem.n, baseline.plan.problem.proposalWeights, BAND_EDGE_TOLERANCE, seed);
      if (!a || !b) return Number.NaN;
      const diff = new Float64Array(a.length);
      for (let r = 0; r < a.length; r++) diff[r] = a[r] - b[r];
      return stridedMoments(diff, 0, 1, diff.length).sd;
    }
    case 'forecast-break-even-std-errs':
      // Break-even shifts are exact (no draws): the difference of two runs has no Monte Carlo error.
      return 0;
    case 'mean-driven-share': {
      // A share whose own error is not estimable (a channel's spread rests on a few rare draws)
      // makes the difference's error not estimable either.
      const fixedA = { meanChannelFixed: !candidate.plan.solvers[ka].usesMean };
      const fixedB = { meanChannelFixed: !baseline.plan.solvers[kb].usesMean };
      if (ma.channels.summarize(fixedA).overallErrorMethod === 'not-estimable' || mb.channels.summarize(fixedB).overallErrorMethod === 'not-estimable') return Number.NaN;
      const a = ma.channels.leaveOneGroupOutShares();
      const b = mb.channels.leaveOneGroupOutShares();
      if (a.length !== b.length || a.length < 2) return undefined;
      const diff = new Float64Array(a.length);
      for (let k = 0; k < a.length; k++) diff[k] = a[k] - b[k];
      return jackknifeStdErr(diff, diff.length);
    }
  }
}
