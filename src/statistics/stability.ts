import type { Seed } from '../resample/streams.js';
import { BOOTSTRAP_REPLICATES, bootstrapCounts, expandedQuantile, resampledTotal, sortedDraws } from './draw-bootstrap.js';
import { stridedMoments } from './batch-means.js';
import { quantileSorted } from './quantiles.js';
import { binomialCdf, binomialSurvival } from './binomial-tail.js';

/** Tolerance for "outside the band": a weight within 1e-9 of a band edge is on it. */
export const BAND_EDGE_TOLERANCE = 1e-9;

/**
 * An asset is recomputed in the replicates only when its proposed weight lies within this many
 * binomial sds of rank of a band edge; further out, no replicate can move the edge past it
 * (the chance is below 1e-11 per replicate).
 */
const ACTIVE_RANK_SDS = 7;

/** Band edges of the outside-band share (the p05–p95 band). */
const LOW = 0.05;
const HIGH = 0.95;
/** Probability above the p95 edge, 1 − HIGH (written out: 1 − 0.95 is not 0.05 in floating point). */
const HIGH_TAIL = 0.05;

/**
 * Share of assets whose proposed weight lies outside the p05–p95 band of a method's resampled
 * weights, with its Monte Carlo standard error from a bootstrap of the draws (see
 * BOOTSTRAP_REPLICATES and MONTE_CARLO_ERROR_DESCRIPTION). `rows` is B×N with NaN rows for
 * failed draws. The error is a pure function of the rows, the proposal and the seed, so ranges of
 * draws computed apart give the same figure. NaN stdErr with fewer than 2 successful draws.
 */
export function outsideBandShare(
  rows: Float64Array,
  draws: number,
  n: number,
  proposal: Float64Array,
  tolerance: number,
  seed: Seed,
): { value: number; stdErr: number } {
  const column = new Float64Array(draws);
  const value = outsideBandShareOver(rows, n, proposal, tolerance, 0, draws, column);
  const replicates = outsideBandShareReplicates(rows, draws, n, proposal, tolerance, seed);
  if (!replicates) return { value, stdErr: Number.NaN };
  return { value, stdErr: stridedMoments(replicates, 0, 1, replicates.length).sd };
}

/**
 * The outside-band share recomputed in each of the R bootstrap replicates of the draws
 * (undefined with fewer than 2 successful draws). Replicate r resamples B draw indices with
 * replacement from the stream (seed, r, 'mc-error'), so two runs with the same seed and draw count
 * resample the same draws — the paired bootstrap of `check --baseline`.
 */
export function outsideBandShareReplicates(
  rows: Float64Array,
  draws: number,
  n: number,
  proposal: Float64Array,
  tolerance: number,
  seed: Seed,
): Float64Array | undefined {
  const column = new Float64Array(draws);
  let fixedOutside = 0;
  let assets = 0;
  const active: { sorted: Float64Array; order: Int32Array; x: number }[] = [];
  for (let i = 0; i < n; i++) {
    const m = sortedColumn(rows, n, i, 0, draws, column);
    if (m === 0) continue;
    if (m < 2) return undefined;
    assets++;
    const sorted = column.subarray(0, m);
    const x = proposal[i];
    const outside = outsideOwnBand(sorted, m, x, tolerance);
    if (!nearEdge(sorted, m, x, tolerance)) {
      if (outside) fixedOutside++;
      continue;
    }
    active.push({ ...sortedDraws(rows, i, n, draws), x });
  }
  if (assets === 0) return undefined;
  const out = new Float64Array(BOOTSTRAP_REPLICATES);
  if (active.length === 0) return out.fill(fixedOutside / assets);
  const replicates = bootstrapCounts(seed, draws);
  for (let r = 0; r < BOOTSTRAP_REPLICATES; r++) {
    const counts = replicates[r];
    // Failed draws are failed for every asset of a method (whole rows), so one total serves all.
    const total = resampledTotal(active[0].order, counts);
    let outside = fixedOutside;
    for (const a of active) {
      if (total === 0) break;
      const lo = expandedQuantile(a.sorted, a.order, counts, LOW, total);
      const hi = expandedQuantile(a.sorted, a.order, counts, HIGH, total);
      if (a.x < lo - tolerance || a.x > hi + tolerance) outside++;
    }
    out[r] = outside / assets;
  }
  return out;
}

/** Whether x lies within ACTIVE_RANK_SDS binomial sds of rank of the p05 or p95 order statistic. */
function nearEdge(sorted: Float64Array, m: number, x: number, tolerance: number): boolean {
  for (const q of [LOW, HIGH]) {
    const spread = ACTIVE_RANK_SDS * Math.sqrt(m * q * (1 - q)) + 2;
    const lo = sorted[Math.max(0, Math.floor(m * q - spread))];
    const hi = sorted[Math.min(m - 1, Math.ceil(m * q + spread))];
    if (x >= lo - 2 * tolerance && x <= hi + 2 * tolerance) return true;
  }
  return false;
}

/** The outside-band share over draws [from, to) (NaN when no draw succeeded); `column` needs to − from entries. */
export function outsideBandShareOver(
  rows: Float64Array,
  n: number,
  proposal: Float64Array,
  tolerance: number,
  from: number,
  to: number,
  column: Float64Array,
): number {
  let outside = 0;
  let assets = 0;
  for (let i = 0; i < n; i++) {
    const count = sortedColumn(rows, n, i, from, to, column);
    if (count === 0) continue;
    assets++;
    if (outsideOwnBand(column.subarray(0, count), count, proposal[i], tolerance)) outside++;
  }
  return assets === 0 ? Number.NaN : outside / assets;
}

/** Asset i's successful weights of draws [from, to), sorted ascending into column[0..count); returns count. */
function sortedColumn(rows: Float64Array, n: number, i: number, from: number, to: number, column: Float64Array): number {
  let count = 0;
  for (let b = from; b < to; b++) {
    const w = rows[b * n + i];
    if (Number.isFinite(w)) column[count++] = w;
  }
  column.subarray(0, count).sort();
  return count;
}

/** Whether x lies outside the p05–p95 band of the sorted weights; a weight on a band edge (e.g. both 0 at a bound) is inside. */
function outsideOwnBand(sorted: Float64Array, m: number, x: number, tolerance: number): boolean {
  return x < quantileSorted(sorted, m, LOW) - tolerance || x > quantileSorted(sorted, m, HIGH) + tolerance;
}

/**
 * What the gate's bound on the outside-band share needs from the draws, per asset: the successful
 * draws m and the counts of draws with w ≤ x + tol and with w ≥ x − tol (x the proposed weight).
 * Sums over the per-draw slots, so ranges of draws computed apart and merged give the same counts.
 */
export interface OutsideBandCounts {
  readonly assets: number;
  /** Successful draws per asset (0: the asset has no draws and is not counted in the share). */
  readonly successful: Int32Array;
  /** #{draws with w ≤ x + tol} per asset. */
  readonly atOrBelow: Int32Array;
  /** #{draws with w ≥ x − tol} per asset. */
  readonly atOrAbove: Int32Array;
}

export function outsideBandCounts(rows: Float64Array, draws: number, n: number, proposal: ArrayLike<number>, tolerance: number): OutsideBandCounts {
  const successful = new Int32Array(n);
  const atOrBelow = new Int32Array(n);
  const atOrAbove = new Int32Array(n);
  for (let b = 0; b < draws; b++) {
    const row = b * n;
    for (let i = 0; i < n; i++) {
      const w = rows[row + i];
      if (!Number.isFinite(w)) continue;
      successful[i]++;
      if (w <= proposal[i] + tolerance) atOrBelow[i]++;
      if (w >= proposal[i] - tolerance) atOrAbove[i]++;
    }
  }
  return { assets: n, successful, atOrBelow, atOrAbove };
}

/** A one-sided confidence bound of the outside-band share, with the count of assets behind it. */
export interface OutsideBandShareBound {
  readonly bound: number;
  /** Assets confidently outside (side 'lower'), or not confidently inside (side 'upper'). */
  readonly outside: number;
  /** Assets with successful draws (the share's denominator). */
  readonly assets: number;
}

/**
 * One-sided simultaneous confidence bound of the outside-band share at level α: side 'lower' is
 * below the share of the limit distribution (infinitely many draws) with probability ≥ 1 − α,
 * side 'upper' above it.
 *
 * Per asset a distribution-free quantile test on the draws (the binomial test for a quantile;
 * Conover, Practical Nonparametric Statistics, 3rd ed. 1999, §3.2; from memory). With F the limit
 * distribution of the asset's weight and x its proposed weight, x lies below the band's p05 edge
 * (by more than the tolerance) iff F(x + tol) < 0.05, and above the p95 edge iff P(W ≥ x − tol) < 0.05.
 * The count k_lo of draws with w ≤ x + tol is Binomial(m, F(x + tol)), so
 *   "outside below" is shown when P(Bin(m, 0.05) ≤ k_lo) is small (H0: F(x + tol) ≥ 0.05), and
 *   "not outside below" when P(Bin(m, 0.05) ≥ k_lo) is small (H0: F(x + tol) < 0.05);
 * the p95 edge likewise with k_hi = #{w ≥ x − tol}. An asset is confidently outside when either
 * side's "outside" is shown (p-value the smaller of the two; since P(W ≤ x + tol) + P(W ≥ x − tol) ≥ 1,
 * at most one side's null can sit near 0.05 and the other side adds at most P(Bin(m, ½) ≤ 0.05m)
 * ≤ exp(−0.49m) (Chernoff), below 1e-12 when the test level is 5 % or less, since a rejection then
 * needs 0.95^m ≤ 0.05, m ≥ 59), and confidently inside when both
 * "not outside" are shown (an intersection–union test: p-value the larger of the two).
 *
 * Simultaneous over the assets by Holm's step-down procedure (Holm 1979, "A simple sequentially
 * rejective multiple test procedure"): the p-values sorted, the j-th smallest (from 0) rejected at
 * α/(M − j) while they keep being rejected, M = assets with successful draws. Holm controls the
 * chance of any false rejection at α under any dependence between assets, so with probability
 * ≥ 1 − α no inside asset is called outside (lower bound = confidently outside / M ≤ the limit
 * share), and, run on the other hypotheses, no outside asset is called inside (upper bound =
 * not confidently inside / M ≥ the limit share). It is at least as strong as Bonferroni (α/M for
 * every asset): assets far from both edges have p-values like 0.05^m and are rejected first, so
 * the ambiguous assets are tested at about α/(number of ambiguous assets).
 *
 * A point mass classifies exactly: all m draws at x give k_lo = k_hi = m and p-value 0.05^m for
 * "inside"; all at c far from x give 0.95^m for "outside". Undefined when an asset with draws has
 * fewer than 2 (the bound is not estimable, like the share's stdErr) or no asset has draws.
 */
export function outsideBandShareBound(counts: OutsideBandCounts, side: 'lower' | 'upper', alpha: number): OutsideBandShareBound | undefined {
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must lie in (0, 1), got ${alpha}`);
  const pValues: number[] = [];
  for (let i = 0; i < counts.assets; i++) {
    const m = counts.successful[i];
    if (m === 0) continue;
    if (m < 2) return undefined;
    const below = counts.atOrBelow[i];
    const above = counts.atOrAbove[i];
    pValues.push(
      side === 'lower'
        ? Math.min(binomialCdf(below, m, LOW), binomialCdf(above, m, HIGH_TAIL))
        : Math.max(binomialSurvival(below, m, LOW), binomialSurvival(above, m, HIGH_TAIL)),
    );
  }
  const assets = pValues.length;
  if (assets === 0) return undefined;
  const rejected = holmRejections(pValues, alpha);
  const outside = side === 'lower' ? rejected : assets - rejected;
  return { bound: outside / assets, outside, assets };
}

/** Number of hypotheses Holm's step-down procedure rejects at family-wise level α. */
export function holmRejections(pValues: readonly number[], alpha: number): number {
  const sorted = [...pValues].sort((a, b) => a - b);
  const m = sorted.length;
  let j = 0;
  while (j < m && sorted[j] <= alpha / (m - j)) j++;
  return j;
}
