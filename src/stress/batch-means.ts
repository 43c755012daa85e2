import { gatherFiniteSorted, quantileSorted } from './quantiles.js';

/**
 * Monte Carlo standard errors of statistics computed from the B resampling draws.
 *
 * - Means (and other averages of per-draw values): sample sd (divisor n − 1) / √n over the n
 *   successful draws — the draws are independent, so this is the textbook standard error.
 * - Quantiles and other non-linear statistics: non-overlapping batch means (Schmeiser 1982,
 *   "Batch size effects in the analysis of simulation output", Operations Research 30(3)). The
 *   draw indices 0..B−1 are cut into m = min(30, ⌊B/10⌋) contiguous batches, batch k holding
 *   draws ⌊kB/m⌋ .. ⌊(k+1)B/m⌋ − 1; the statistic is computed within each batch (successful
 *   draws only) and SE = sd(batch statistics, divisor m − 1) / √m. The estimate itself is always
 *   the full-sample statistic: a statistic computed on a small batch can be biased (e.g. a 5th
 *   percentile of 10 values), so the batches are used only for the spread (common practice).
 *   Because batches are fixed by draw index, the result does not depend on how the draws were
 *   split across loops or processes.
 * - Quantiles with fewer than 10 batches (B < 100): the distribution-free order-statistic
 *   interval instead — ranks nq ∓ z√(nq(1−q)) from the normal approximation to the binomial
 *   (e.g. Conover, Practical Nonparametric Statistics, 3rd ed. 1999, §3.2; from memory), clamped
 *   to the sample, and SE = (x_(upper) − x_(lower)) / (2z) with z = 1.959964. Clamping at the
 *   sample's extremes understates the width for extreme quantiles of very small samples.
 * - Shares confined to [0, 1] with fewer than 2 usable batches: 0.5, the largest standard
 *   deviation any [0, 1]-valued quantity can have (Popoviciu's inequality) — conservative.
 * - Fewer than 2 successful draws: NaN (no error can be estimated; the report shows null).
 */
export const MONTE_CARLO_ERROR_DESCRIPTION =
  'Monte Carlo standard errors: for means, the sample standard deviation (divisor n-1) over the n ' +
  'successful draws divided by sqrt(n). For percentiles and the mean-driven share, non-overlapping ' +
  'batch means (Schmeiser 1982): draws 0..B-1 are cut by index into m = min(30, floor(B/10)) ' +
  'contiguous batches, the statistic is recomputed within each batch, and the standard error is the ' +
  'standard deviation of the batch statistics divided by sqrt(m); the reported value is always the ' +
  'full-sample statistic. With fewer than 10 batches (B < 100), percentile errors use the ' +
  'order-statistic interval (ranks nq -/+ 1.96 sqrt(nq(1-q)), half-width / 1.96) and the mean-driven ' +
  'share error uses batch means if at least 2 batches exist, else the conservative bound 0.5. ' +
  'Errors that cannot be estimated (fewer than 2 successful draws) are reported as 0, with a warning about too few draws.';

/** At most this many batches (the design asks for 20–50 when B allows). */
export const MAX_BATCHES = 30;
/** Smallest batch: fewer than 10 draws per batch makes a batch quantile meaningless. */
export const MIN_BATCH_SIZE = 10;
/** Quantile errors use batch means only with at least this many batches; below, order statistics. */
export const MIN_BATCHES_FOR_QUANTILES = 10;
/** Two-sided 95% standard normal point, Φ⁻¹(0.975). */
export const NORMAL_QUANTILE_975 = 1.959963984540054;
/** Conservative SE for a quantity confined to [0, 1]: sd ≤ (1 − 0)/2 (Popoviciu's inequality). */
export const UNIT_INTERVAL_MAX_SD = 0.5;

/** Number of batches for B requested draws: min(30, ⌊B/10⌋) (0 or 1 means "no batch means"). */
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
 * Batch-means standard error from per-batch statistics stats[0..m): sd (divisor m' − 1) / √m'
 * over the m' finite entries (a batch with no successful draw gives NaN and is skipped).
 * NaN when m' < 2.
 */
export function stdErrOfBatchStatistics(stats: ArrayLike<number>, m: number): number {
  const moments = stridedMoments(stats, 0, 1, m);
  return moments.stdErr;
}

/**
 * Order-statistic standard error of the type-7 q-quantile of an ascending sample of n values:
 * half the width of the distribution-free ~95% interval between order statistics of ranks
 * ⌊nq − z√(nq(1−q))⌋ and ⌈nq + z√(nq(1−q))⌉ (1-based, clamped to 1..n), divided by z.
 * NaN when n < 2.
 */
export function orderStatisticStdErr(sorted: ArrayLike<number>, n: number, q: number): number {
  if (n < 2) return Number.NaN;
  const centre = n * q;
  const half = NORMAL_QUANTILE_975 * Math.sqrt(n * q * (1 - q));
  const lowerRank = Math.max(1, Math.floor(centre - half));
  const upperRank = Math.min(n, Math.ceil(centre + half));
  return (sorted[upperRank - 1] - sorted[lowerRank - 1]) / (2 * NORMAL_QUANTILE_975);
}

/** Scratch buffers for the quantile-error routines (allocate once per accumulator summary). */
export interface QuantileErrorWorkspace {
  /** Length ≥ draws: sorted copies of a column or a batch. */
  readonly sort: Float64Array;
  /** Length ≥ MAX_BATCHES: one statistic per batch. */
  readonly batch: Float64Array;
}

export function createQuantileErrorWorkspace(draws: number): QuantileErrorWorkspace {
  return { sort: new Float64Array(Math.max(1, draws)), batch: new Float64Array(MAX_BATCHES) };
}

/**
 * Monte Carlo standard errors of the type-7 quantiles `probabilities` of the strided column
 * data[start + b·stride], b = 0..draws−1 (NaN = failed draw): out[j] for probabilities[j].
 * Batch means when batchCount(draws) ≥ 10, else the order-statistic interval (see
 * MONTE_CARLO_ERROR_DESCRIPTION). Returns 'batch-means' or 'order-statistic'.
 */
export function quantileStdErrs(
  data: ArrayLike<number>,
  start: number,
  stride: number,
  draws: number,
  probabilities: ArrayLike<number>,
  out: Float64Array,
  workspace: QuantileErrorWorkspace,
): 'batch-means' | 'order-statistic' {
  const batches = batchCount(draws);
  if (batches < MIN_BATCHES_FOR_QUANTILES) {
    const n = gatherFiniteSorted(data, start, stride, draws, workspace.sort);
    for (let j = 0; j < probabilities.length; j++) out[j] = orderStatisticStdErr(workspace.sort, n, probabilities[j]);
    return 'order-statistic';
  }
  for (let j = 0; j < probabilities.length; j++) {
    for (let k = 0; k < batches; k++) {
      const from = batchStart(draws, batches, k);
      const to = batchStart(draws, batches, k + 1);
      const n = gatherFiniteSorted(data, start + from * stride, stride, to - from, workspace.sort);
      workspace.batch[k] = quantileSorted(workspace.sort, n, probabilities[j]);
    }
    out[j] = stdErrOfBatchStatistics(workspace.batch, batches);
  }
  return 'batch-means';
}

/**
 * Monte Carlo standard error of a band width Q(high) − Q(low) of the same strided column: batch
 * means of the per-batch width when batchCount(draws) ≥ 10; otherwise √(SE_low² + SE_high²)
 * from the order-statistic errors, which ignores the positive correlation of the two order
 * statistics and so overstates the error (conservative).
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
  const batches = batchCount(draws);
  if (batches < MIN_BATCHES_FOR_QUANTILES) {
    const n = gatherFiniteSorted(data, start, stride, draws, workspace.sort);
    const lowErr = orderStatisticStdErr(workspace.sort, n, low);
    const highErr = orderStatisticStdErr(workspace.sort, n, high);
    return Math.sqrt(lowErr * lowErr + highErr * highErr);
  }
  for (let k = 0; k < batches; k++) {
    const from = batchStart(draws, batches, k);
    const to = batchStart(draws, batches, k + 1);
    const n = gatherFiniteSorted(data, start + from * stride, stride, to - from, workspace.sort);
    workspace.batch[k] = quantileSorted(workspace.sort, n, high) - quantileSorted(workspace.sort, n, low);
  }
  return stdErrOfBatchStatistics(workspace.batch, batches);
}
