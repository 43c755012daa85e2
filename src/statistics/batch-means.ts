import { binomialCdf, binomialSurvival } from './binomial-tail.js';
import { gatherFiniteSorted } from './quantiles.js';

/**
 * Monte Carlo standard errors of statistics computed from the B resampling draws. The draws are
 * independent and identically distributed across b (each has its own seeded stream), so every
 * error below is a pure function of the per-draw slot data at summary time: ranges of draws
 * computed apart merge into the same errors, bit for bit.
 *
 * - Means (and other averages of per-draw values): sample sd (divisor n − 1) / √n over the n
 *   successful draws — the textbook standard error.
 * - Percentiles: the exact bootstrap sd of the sample percentile (Maritz & Jarrett 1978, JASA
 *   73; `orderStatisticStdErr`): the r-th order statistic of a resample lands on position i with
 *   probability P(Bin(n, i/n) ≥ r) − P(Bin(n, (i−1)/n) ≥ r), so its variance is a weighted sum over
 *   the sorted draws, no resampling needed. On smooth columns it tracks the asymptotic sd
 *   √(q(1−q)/n)/f(Q(q)) (Serfling 1980, §2.3.3). Per-draw figures pile up at corner portfolios and
 *   bounds, and there it weighs every cluster a rerun's percentile can reach; exactly 0 when the
 *   draws within ±7 sds of rank are all tied (no plausible rerun leaves the mass). The former rule,
 *   the order-statistic interval s·(Q(q + 1.96s) − Q(q − 1.96s))/(2·1.96) (Siddiqui 1960 / Bloch &
 *   Gastwirth 1968 sparsity), saw only ±1.96 sds of rank and under-stated a percentile at the edge
 *   of a cluster 1.4–1.6× (full Kelly's median turnover, demo, 200–2000 draws).
 * - A difference of two percentiles of one column (a band width Q(h) − Q(l)):
 *   Var = SE_l² + SE_h² − 2ρ·SE_l·SE_h with the asymptotic correlation of sample quantiles
 *   ρ = l(1−h) / √(l(1−l)·h(1−h)) (Serfling 1980, §2.3.3; 0.0526 for the 5th and 95th).
 * - Differences between two runs on common random numbers (check --baseline) of percentiles: a
 *   bootstrap that resamples the same draws in both runs (draw-bootstrap.ts); of means and sds:
 *   the per-draw differences of their influence values.
 * - Standard deviations: the delta method, Var(s) ≈ (m₄ − s⁴)/(4s²n), m₄ the fourth central
 *   moment (no normality assumed). The max weight sd: that error of its leader, or with nearly tied
 *   sds the error of the maximum (max-sd-error.ts); paired: the sd/√n of the difference of the two
 *   runs' leaders' per-draw influence values ((x − x̄)² − s²)/(2s).
 * - Outside-band share: a bootstrap of the draws — R = 200 replicates, each drawing B draw indices
 *   with replacement from its own seeded stream (seed, replicate, 'mc-error'); the share is
 *   recomputed from the resampled draws and SE = sd of the replicates (Efron & Tibshirani 1993,
 *   An Introduction to the Bootstrap, ch. 6). Paired: the same indices for both runs. Assets whose
 *   proposed weight lies more than 7 binomial sds of rank away from both band edges cannot change
 *   side in any replicate and are not recomputed.
 * - Mean-driven share (a ratio of channel variances, a smooth function of the draws' moments):
 *   the delete-one-group jackknife over the m = min(30, ⌊B/10⌋) contiguous groups of draws that
 *   the channel accumulator stores (Efron & Tibshirani 1993, ch. 11), SE² = (m−1)/m·Σ(θ₍ₖ₎ − θ̄)².
 *   Paired: the jackknife of the difference over the same groups. With fewer than 2 groups
 *   (B < 20): the bound 0.5, the largest sd of a [0, 1]-valued quantity (Popoviciu's inequality).
 *   Exactly 0 when the share cannot move (a method that ignores the means, or no channel moved).
 *   Not estimable (null, with a warning giving the draws that would help) when a channel that can
 *   move has its spread in fewer than min(5, m/2) effective groups (Kish's (Σ T_k)²/Σ T_k² over the
 *   groups' sums of squared deviations; 0 if it never moved): such a spread rests on a few rare
 *   draws (full Kelly at a corner), whose count across reruns is Poisson-like with a small mean λ,
 *   so any error read from the draws averages λ·δ against a true spread √λ·δ (see
 *   channel-variance.ts). Paired: not estimable when either run's is.
 * - Selection rate: the binomial √(p(1−p)/(n−1)).
 * - Fewer than 2 successful draws (or a mean-driven share resting on rare draws, above): the error
 *   cannot be estimated; the report gives null and a warning.
 *
 * The gate (`check`, src/stress/verdict.ts) judges each rule by a one-sided confidence bound at the
 * policy's confidence, reported as the rule's `bound`: value ∓ z·SE for the figures above, but for
 * the outside-band share (whole-asset steps, for which no SE makes value ∓ z·SE honest) a count of
 * assets confidently outside / not confidently inside their band by binomial quantile tests on the
 * draws, Holm-adjusted over the assets (stability.ts), and for the max weight sd (the largest of
 * nearly tied sds is biased upward) max_i(s_i ∓ z·se_i) with Bonferroni for the lower bound
 * (max-sd-bound.ts), and for the median turnover (atoms at corner portfolios) and the volatility
 * band width (biased low at few draws) distribution-free order-statistic bounds (quantile-bound.ts).
 */
export const MONTE_CARLO_ERROR_DESCRIPTION =
  'Monte Carlo standard errors; the draws are independent, and every error is a function of the per-draw results only ' +
  '(ranges of draws computed apart give the same errors). Means: the sample standard deviation (divisor n-1) over the n ' +
  'successful draws divided by sqrt(n). Percentiles: the exact bootstrap standard deviation of the sample percentile ' +
  '(Maritz & Jarrett 1978: order statistic x_(i) weighted by P(Binomial(n, i/n) >= r) - P(Binomial(n, (i-1)/n) >= r); type 7 interpolates the two neighbours), ' +
  'exactly 0 when the draws within q -/+ 7 s, s = sqrt(q(1-q)/n), are all tied (a point mass no rerun plausibly leaves); ' +
  'at the edge of a point mass it counts the chance that a rerun leaves the mass times the jump. Band widths combine the two ' +
  'percentile errors with the asymptotic correlation of sample quantiles. Differences of percentiles of two runs on common random numbers (a baseline): ' +
  'a bootstrap that resamples the same draws in both runs (200 replicates, seeded). Standard deviations: the delta method with the fourth moment. ' +
  'Max weight sd: the leader\'s delta-method error when no other asset\'s sd is within 4 sds of the difference; otherwise the sd, over the 200 seeded ' +
  'replicates, of the largest of the contenders\' sds moved by their linearised bootstrap errors, around centres whose spread is de-biased by the ' +
  'method of moments (nearly tied sds: the maximum spreads less than any one of them). Paired: the leaders\' per-draw influence differences. ' +
  'Outside-band share: a bootstrap of the draws (200 replicates, seeded, draws resampled by index). ' +
  'Mean-driven share: a delete-one-group jackknife over min(30, floor(B/10)) contiguous groups of draws ' +
  '(the bound 0.5 below 20 draws; exactly 0 when the share cannot move, e.g. a method that ignores the means; ' +
  'null, with a warning, when the mean-only or covariance-only channel moved the weights in so few draws ' +
  '(fewer than min(5, groups/2) effective groups) that the share rests on rare draws whose error the draws cannot show). ' +
  'Selection rate: sqrt(p(1-p)/(n-1)). ' +
  'Errors that cannot be estimated (fewer than 2 successful draws, a mean-driven share resting on rare draws, or a weight whose mean or selection rate rests on 1 to 4 draws off its usual value) are reported as null, with a warning. ' +
  'The gate (check) judges each rule by a one-sided confidence bound at the policy confidence (verdict rule `bound`): ' +
  'value -/+ z*SE, z = the normal quantile at the confidence (for the mean-driven share, a share in (0, 1), on the logit scale: expit(logit(v) -/+ z*SE/(v(1-v))), ' +
  'with z the Student t quantile on m-1 degrees of freedom, m = min(30, floor(B/10)) jackknife groups, as also for maxIncrease of it), except for figures that a standard error cannot gate honestly. ' +
  'Outside-band share (it moves in whole assets): per asset, exact binomial tests on the draws of whether the proposed weight lies ' +
  'below the 5th or above the 95th percentile of the weight distribution (the count of draws at or below it is Binomial(n, F(x))), ' +
  'Holm-adjusted over the assets; lower bound = assets confidently outside / assets, upper bound = assets not confidently inside / assets. ' +
  'Max weight sd (the largest of several nearly tied sds is biased upward): lower bound max_i(sd_i - z(alpha/m)*se_i) over the m assets ' +
  'with a positive sd (Bonferroni), upper bound max_i(sd_i + z*se_i). For maxIncrease of these two: lower bound of the candidate minus ' +
  'upper bound of the baseline, each at alpha/2. Median turnover (max and min rules; it piles up at corner portfolios, so its sample median ' +
  'jumps between clusters): the distribution-free order-statistic bound, the k-th smallest draw with k the smallest index such that ' +
  'P(Binomial(n, 0.5) <= k-1) >= confidence (upper bound), or the j-th with j the largest such that P(Binomial(n, 0.5) >= j) >= confidence (lower bound); ' +
  'maxIncrease of the median turnover with both runs at hand: lower bound of the candidate minus upper bound of the baseline, each at alpha/2. ' +
  'Volatility band width (max and min rules; its sample value is biased low at few draws): the same order-statistic bounds of the 95th and ' +
  '5th percentiles, each at alpha/2 (upper bound = upper p95 - lower p05, lower bound = lower p95 - upper p05).';

/** Storage groups of the channel accumulator: at most this many (jackknife groups). */
export const MAX_BATCHES = 30;
/** Smallest storage group. */
export const MIN_BATCH_SIZE = 10;
/** Two-sided 95% standard normal point, Φ⁻¹(0.975). */
export const NORMAL_QUANTILE_975 = 1.959963984540054;
/** Conservative SE for a quantity confined to [0, 1]: sd ≤ (1 − 0)/2 (Popoviciu's inequality). */
export const UNIT_INTERVAL_MAX_SD = 0.5;

/** Number of storage groups for B requested draws: min(30, ⌊B/10⌋) (0 or 1 means "no groups"). */
export function batchCount(draws: number): number {
  return Math.min(MAX_BATCHES, Math.floor(draws / MIN_BATCH_SIZE));
}

/** First draw index of batch k (k = batches gives B, the end of the last batch). */
export function batchStart(draws: number, batches: number, k: number): number {
  return Math.floor((k * draws) / batches);
}

/** The batch holding draw `drawIndex`: the k with batchStart(k) ≤ drawIndex < batchStart(k + 1). */
export function batchOfDraw(draws: number, batches: number, drawIndex: number): number {
  // ⌊kB/m⌋ ≤ b ⟺ k ≤ ⌈m(b+1)/B⌉ − 1, and b < ⌊(k+1)B/m⌋ ⟺ k ≥ m(b+1)/B − 1.
  return Math.floor((batches * (drawIndex + 1) - 1) / draws);
}

/** Count, mean, sample sd (divisor n − 1) and standard error sd/√n of a sample. */
export interface SampleMoments {
  readonly count: number;
  readonly mean: number;
  /** NaN when count < 2. */
  readonly sd: number;
  /** sd / √count; NaN when count < 2. */
  readonly stdErr: number;
}

/**
 * Moments of the finite entries data[start + k·stride], k = 0..count−1, by two passes in index
 * order (deterministic; the second pass avoids the cancellation of Σx² − (Σx)²/n). A constant
 * sample returns that constant as its mean and sd 0 exactly.
 */
export function stridedMoments(data: ArrayLike<number>, start: number, stride: number, count: number): SampleMoments {
  let n = 0;
  let sum = 0;
  let low = Number.POSITIVE_INFINITY;
  let high = Number.NEGATIVE_INFINITY;
  for (let k = 0, at = start; k < count; k++, at += stride) {
    const value = data[at];
    if (Number.isFinite(value)) {
      n++;
      sum += value;
      if (value < low) low = value;
      if (value > high) high = value;
    }
  }
  if (n === 0) return { count: 0, mean: Number.NaN, sd: Number.NaN, stdErr: Number.NaN };
  // A constant sample has mean and sd exactly (the rounded Σx/n could otherwise miss both).
  if (low === high) return { count: n, mean: low, sd: n < 2 ? Number.NaN : 0, stdErr: n < 2 ? Number.NaN : 0 };
  const mean = sum / n;
  if (n < 2) return { count: n, mean, sd: Number.NaN, stdErr: Number.NaN };
  let squares = 0;
  for (let k = 0, at = start; k < count; k++, at += stride) {
    const value = data[at];
    if (Number.isFinite(value)) {
      const deviation = value - mean;
      squares += deviation * deviation;
    }
  }
  const sd = Math.sqrt(squares / (n - 1));
  return { count: n, mean, sd, stdErr: sd / Math.sqrt(n) };
}

/**
 * Standard error sd/√m' of per-group statistics stats[0..m) over the m' finite entries (a group
 * with no successful draw gives NaN and is skipped). NaN when m' < 2.
 */
export function stdErrOfBatchStatistics(stats: ArrayLike<number>, m: number): number {
  return stridedMoments(stats, 0, 1, m).stdErr;
}

/**
 * Delete-one-group jackknife standard error from the leave-one-out statistics loo[0..m)
 * (non-finite entries skipped): √((m'−1)/m'·Σ(θ₍ₖ₎ − θ̄)²). NaN when m' < 2. Exactly 0 when
 * every leave-one-out statistic is the same.
 */
export function jackknifeStdErr(loo: ArrayLike<number>, m: number): number {
  const moments = stridedMoments(loo, 0, 1, m);
  if (moments.count < 2) return Number.NaN;
  const k = moments.count;
  // Σ(θ − θ̄)² = (k − 1)·sd².
  return Math.sqrt(((k - 1) / k) * (k - 1)) * moments.sd;
}

/**
 * Standard error of the type-7 q-quantile of the first n entries of an ascending array: the exact
 * bootstrap sd of the sample quantile (Maritz & Jarrett 1978, "A note on estimating the variance
 * of the sample median", JASA 73(361); from memory), exactBootstrapStdErr. Exactly 0 when the
 * draws within q ± 7 sds of rank are tied (a point mass no plausible rerun leaves).
 *
 * Why not the order-statistic interval s·(Q(q + 1.96s) − Q(q − 1.96s))/(2·1.96), which this
 * replaced: it reads the sparsity 1/f from a window of ±1.96 sds of rank, and per-draw figures
 * pile up at corner portfolios. When the percentile sits at the edge of such an atom, a rerun's
 * percentile jumps to the next cluster, which the window does not see: full Kelly's median turnover
 * (demo) was 1.4–1.6× under-stated at 200–2000 draws, and some weight p95s 1.3–1.6×. The exact
 * bootstrap weighs every order statistic a rerun can reach. On smooth columns the two agree
 * within 2–3 % (DEVELOPERS.md, calibration).
 * NaN when n < 2; at q = 0 or 1 the gap between the two outermost draws.
 */
export function orderStatisticStdErr(sorted: ArrayLike<number>, n: number, q: number): number {
  if (n < 2) return Number.NaN;
  const s = Math.sqrt((q * (1 - q)) / n);
  if (s === 0) {
    // q = 0 or 1: the minimum or maximum; its spread is read from the two outermost draws.
    const gap = q === 0 ? sorted[1] - sorted[0] : sorted[n - 1] - sorted[n - 2];
    return gap;
  }
  return exactBootstrapStdErr(sorted, n, q, s);
}

/** Bootstrap tail mass below which the exact-bootstrap sum stops (see bootstrapOrderStatisticSd). */
const NEGLIGIBLE_TAIL = 1e-20;

/** Half-width, in sds of rank, beyond which no rerun's percentile plausibly reaches (7 sds). */
const POINT_MASS_REACH = 7;

/**
 * Exact bootstrap sd of a type-7 percentile (Maritz & Jarrett 1978; from memory): a resample of
 * the n sorted draws puts its r-th smallest at or below position i with probability
 * P(Binomial(n, i/n) ≥ r), so position i carries w_i = P(Bin(n, i/n) ≥ r) − P(Bin(n, (i−1)/n) ≥ r)
 * and the variance is Σ w_i (x_i − x̄_w)². Ties need no special case: a mass adds its whole
 * weight at one value, and only the weight reaching past its edges spreads. The error is exactly
 * 0 when the draws within q ± 7 sds of rank are all tied (no plausible rerun leaves the mass).
 * Type 7 interpolates Q = (1 − g)·x₍ᵣ₎ + g·x₍ᵣ₊₁₎; its sd is at most (1 − g)·sd(x₍ᵣ₎) + g·sd(x₍ᵣ₊₁₎)
 * (Cauchy–Schwarz; adjacent order statistics are nearly perfectly correlated), which is returned.
 * Calibration (D1 case, 200 draws, 300 seeds): full Kelly's certainty-equivalent-loss median sits
 * on a corner portfolio holding 55 % of the draws, never moved in any seed, and is reported ± 1e-7
 * (the interval rule's window, widened past the mass, gave ± 2.7e-4).
 */
export function exactBootstrapStdErr(sorted: ArrayLike<number>, n: number, q: number, s = Math.sqrt((q * (1 - q)) / n)): number {
  const h = (n - 1) * q;
  const j = Math.floor(h);
  const g = h - j;
  const first = bootstrapOrderStatisticSd(sorted, n, j, q, s);
  return g > 0 && j + 1 < n ? (1 - g) * first + g * bootstrapOrderStatisticSd(sorted, n, j + 1, q, s) : first;
}

/** The bootstrap weights of the order statistic of rank r among n: w[k] for 1-based position `first` + k. */
interface OrderStatisticWeights {
  readonly first: number;
  readonly weights: Float64Array;
}

/**
 * Weights by (n, r): they do not depend on the data, and every asset's percentile of a method
 * (same successful draws) uses the same ones. A few hundred entries at most are kept.
 */
const weightCache = new Map<number, OrderStatisticWeights>();
const WEIGHT_CACHE_ENTRIES = 512;

/**
 * w_i for 1-based positions i around r, summed outwards until the remaining binomial tail is below
 * 1e-20 (about 9 sds of rank; what is left adds less than 1e-20 × (range of the draws)² to the
 * variance, far below any error worth reporting). Below r the weights are differences of
 * P(Bin ≥ r), above it of P(Bin ≤ r − 1), so each is a difference of small tails and keeps its
 * relative precision where it matters (a tiny error made of rare jumps).
 */
function orderStatisticWeights(n: number, r: number): OrderStatisticWeights {
  const key = n * (n + 1) + r;
  const cached = weightCache.get(key);
  if (cached) return cached;
  const below: number[] = [];
  // Positions r, r − 1, …: w_i = P(Bin(n, i/n) ≥ r) − P(Bin(n, (i − 1)/n) ≥ r).
  let atOrBelow = binomialSurvival(r, n, r / n);
  let i = r;
  for (; i >= 1 && atOrBelow > NEGLIGIBLE_TAIL; i--) {
    const next = binomialSurvival(r, n, (i - 1) / n);
    below.push(atOrBelow - next);
    atOrBelow = next;
  }
  const first = i + 1;
  const above: number[] = [];
  // Positions r + 1, …: w_i = P(Bin(n, (i − 1)/n) ≤ r − 1) − P(Bin(n, i/n) ≤ r − 1).
  let beyond = binomialCdf(r - 1, n, r / n);
  for (let k = r + 1; k <= n && beyond > NEGLIGIBLE_TAIL; k++) {
    const next = binomialCdf(r - 1, n, k / n);
    above.push(beyond - next);
    beyond = next;
  }
  const weights = new Float64Array(below.length + above.length);
  for (let k = 0; k < below.length; k++) weights[k] = below[below.length - 1 - k];
  weights.set(above, below.length);
  const entry = { first, weights };
  if (weightCache.size >= WEIGHT_CACHE_ENTRIES) weightCache.clear();
  weightCache.set(key, entry);
  return entry;
}

/** Exact bootstrap sd of the order statistic at 0-based `index`: 0 when the draws within q ± 7s are tied. */
function bootstrapOrderStatisticSd(sorted: ArrayLike<number>, n: number, index: number, q: number, s: number): number {
  // 1-based positions i whose rank interval ((i − 1)/n, i/n] meets [q − 7s, q + 7s].
  const lowest = Math.max(1, Math.ceil(n * (q - POINT_MASS_REACH * s)));
  const highest = Math.min(n, Math.floor(n * (q + POINT_MASS_REACH * s)) + 1);
  if (sorted[lowest - 1] === sorted[highest - 1]) return 0;
  const { first, weights } = orderStatisticWeights(n, index + 1);
  // Deviations from the order statistic itself, so the mass it sits on adds exactly 0.
  const centre = sorted[index];
  let total = 0;
  let sum = 0;
  let squares = 0;
  for (let k = 0; k < weights.length; k++) {
    const deviation = sorted[first - 1 + k] - centre;
    const w = weights[k];
    total += w;
    sum += w * deviation;
    squares += w * deviation * deviation;
  }
  if (!(total > 0)) return 0;
  const mean = sum / total;
  return Math.sqrt(Math.max(0, squares / total - mean * mean));
}

/**
 * Asymptotic correlation of the sample l- and h-quantiles of one sample (l ≤ h):
 * l(1−h)/√(l(1−l)h(1−h)) (Serfling 1980, §2.3.3). 0 when either is 0 or 1.
 */
export function quantileCorrelation(l: number, h: number): number {
  const a = Math.min(l, h);
  const b = Math.max(l, h);
  const denominator = Math.sqrt(a * (1 - a) * b * (1 - b));
  return denominator > 0 ? (a * (1 - b)) / denominator : 0;
}

/** Scratch buffers for the quantile-error routines (allocate once per accumulator summary). */
export interface QuantileErrorWorkspace {
  /** Length ≥ draws: sorted copies of a column. */
  readonly sort: Float64Array;
  /** Length ≥ MAX_BATCHES: one statistic per group. */
  readonly batch: Float64Array;
}

export function createQuantileErrorWorkspace(draws: number): QuantileErrorWorkspace {
  return { sort: new Float64Array(Math.max(1, draws)), batch: new Float64Array(MAX_BATCHES) };
}

/**
 * Order-statistic standard errors of the type-7 quantiles `probabilities` of the strided column
 * data[start + b·stride], b = 0..draws−1 (NaN = failed draw): out[j] for probabilities[j].
 */
export function quantileStdErrs(
  data: ArrayLike<number>,
  start: number,
  stride: number,
  draws: number,
  probabilities: ArrayLike<number>,
  out: Float64Array,
  workspace: QuantileErrorWorkspace,
): 'order-statistic' {
  const n = gatherFiniteSorted(data, start, stride, draws, workspace.sort);
  sortedQuantileStdErrs(workspace.sort, n, probabilities, out);
  return 'order-statistic';
}

/** quantileStdErrs of a column already gathered and sorted into sorted[0..n) (no second sort). */
export function sortedQuantileStdErrs(sorted: ArrayLike<number>, n: number, probabilities: ArrayLike<number>, out: Float64Array): void {
  for (let j = 0; j < probabilities.length; j++) out[j] = orderStatisticStdErr(sorted, n, probabilities[j]);
}

/** √(a² + b² − 2ρab), never below 0 (rounding). */
export function combineCorrelated(a: number, b: number, rho: number): number {
  return Math.sqrt(Math.max(0, a * a + b * b - 2 * rho * a * b));
}

/**
 * Standard error of a band width Q(high) − Q(low) of the same strided column: the two
 * order-statistic errors combined with the asymptotic correlation of sample quantiles.
 */
export function quantileWidthStdErr(
  data: ArrayLike<number>,
  start: number,
  stride: number,
  draws: number,
  low: number,
  high: number,
  workspace: QuantileErrorWorkspace,
): number {
  const n = gatherFiniteSorted(data, start, stride, draws, workspace.sort);
  return sortedQuantileWidthStdErr(workspace.sort, n, low, high);
}

/** quantileWidthStdErr of a column already gathered and sorted into sorted[0..n). */
export function sortedQuantileWidthStdErr(sorted: ArrayLike<number>, n: number, low: number, high: number): number {
  return combineCorrelated(orderStatisticStdErr(sorted, n, low), orderStatisticStdErr(sorted, n, high), quantileCorrelation(low, high));
}

/**
 * Standard error of a sample sd by the delta method: Var(s) ≈ (m₄ − s⁴)/(4s²n), m₄ the fourth
 * central moment (e.g. Kendall & Stuart, Advanced Theory of Statistics, vol. 1, §10.8; from
 * memory). NaN when n < 2; 0 when the sample is constant.
 */
export function sdStdErrOfStrided(data: ArrayLike<number>, start: number, stride: number, count: number): number {
  const moments = stridedMoments(data, start, stride, count);
  if (moments.count < 2) return Number.NaN;
  if (moments.sd === 0) return 0;
  let fourth = 0;
  for (let k = 0, at = start; k < count; k++, at += stride) {
    const value = data[at];
    if (Number.isFinite(value)) {
      const d = value - moments.mean;
      fourth += d * d * d * d;
    }
  }
  fourth /= moments.count;
  const variance = moments.sd * moments.sd;
  return Math.sqrt(Math.max(0, fourth - variance * variance) / (4 * variance * moments.count));
}
