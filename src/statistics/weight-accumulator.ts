import { createQuantileErrorWorkspace, sdStdErrOfStrided, sortedQuantileStdErrs, stridedMoments } from './batch-means.js';
import { longestTie, midRankPercentileSorted, quantilesOfStrided } from './quantiles.js';
import {
  checkAssetCount,
  checkDrawCount,
  checkSlotRange,
  slotOfDraw,
  countDraws,
  DRAW_FAILED,
  DRAW_NOT_RECORDED,
  DRAW_SUCCEEDED,
  mergeDrawStatus,
  type DrawCounts,
  type SlotRange,
} from './scalar-accumulator.js';

/**
 * |w_i| above this counts as "selected": 1e-4 = one basis point of capital, the usual floor
 * below which a position is treated as absent (common practice). Override per call.
 */
export const DEFAULT_SELECTION_THRESHOLD = 1e-4;

/**
 * Fewest draws that carry a weight's spread for its mean and selection-rate errors to be read
 * from them. A weight that sits at one value (a bound, mostly 0) in nearly every draw and leaves it
 * in k draws has a mean and a selection rate made of those k draws; with k of 1–4 the sample sd
 * says little about what a rerun would see (rerun counts are roughly Poisson, and the sd of k
 * values is itself unreliable), and sd/√n under-stated the spread across 150 seeds 2–8× on the
 * demo (minimum variance's rarely held assets; DEVELOPERS.md). Then the error is not estimable
 * (null, with a warning), as for the mean-driven share. k = 0 (the weight never moved) keeps an
 * error of exactly 0. 5 matches MIN_EFFECTIVE_GROUPS of the mean-driven share (common practice:
 * at least about 5 events before a normal approximation to a count is used).
 */
export const MIN_DRAWS_OFF_MODE = 5;

/** Doubles a WeightAccumulator keeps: one slots × N block (8 bytes each; slots = B, or end − start for a range), so callers can bound memory. */
export function storedValues(draws: number, assets: number): number {
  return draws * assets;
}

/** Band statistics of one asset's weight across the successful draws of one method. */
export interface AssetWeightSummary {
  readonly mean: number;
  /** sd / √n of the mean; NaN (not estimable) when only 1–4 draws differ from the weight's most common value (MIN_DRAWS_OFF_MODE). */
  readonly meanStdErr: number;
  /** Sample sd, divisor n − 1. */
  readonly sd: number;
  /** Delta-method SE of sd (fourth moment), for `max-weight-sd`. */
  readonly sdStdErr: number;
  readonly p05: number;
  readonly p25: number;
  readonly p50: number;
  readonly p75: number;
  readonly p95: number;
  readonly p05StdErr: number;
  readonly p95StdErr: number;
  /** Order-statistic SE of the median weight. */
  readonly p50StdErr: number;
  /** max(p05StdErr, p95StdErr): one error bar for the band's edges. */
  readonly bandStdErr: number;
  /** Share of successful draws with |w_i| > threshold. */
  readonly selectionRate: number;
  /** √(p(1−p)/(n−1)): sd (divisor n − 1) of the 0/1 indicator over √n; NaN (not estimable) when 1–4 draws are in the minority state. */
  readonly selectionRateStdErr: number;
  /** Mid-rank percentile (0..100) of the proposal's weight inside this asset's draws. */
  readonly proposalPercentile: number;
  /** sd/√n of the per-draw mid-rank score 100·(1{w < x} + ½·1{w = x}). */
  readonly proposalPercentileStdErr: number;
}

export interface WeightSummary extends DrawCounts {
  readonly perAsset: AssetWeightSummary[];
  /** Mean of the re-optimised weights over the successful draws, per asset. */
  readonly meanOfOptima: Float64Array;
  readonly selectionThreshold: number;
  readonly quantileErrorMethod: 'order-statistic';
}

/** JSON-safe state: row-major slots × N weights with 0 in rows that did not succeed. */
export interface WeightAccumulatorState {
  readonly draws: number;
  readonly assets: number;
  /** First draw of the slots (0 when omitted: a whole run); status and rows hold end − start entries. */
  readonly start?: number;
  readonly end?: number;
  readonly status: number[];
  readonly weights: number[];
}

const BAND_PROBABILITIES = [0.05, 0.25, 0.5, 0.75, 0.95];
const EDGE_PROBABILITIES = [0.05, 0.95, 0.5];

/**
 * One method's joint-channel weights: slot drawIndex holds w_b (N values) in a row-major
 * Float64Array of B × N; a row with any non-finite entry is a failed draw (stored as NaN). A range
 * [start, end) of the draws computed apart holds only its end − start rows (draw b in row b − start).
 */
export class WeightAccumulator {
  /** Draws of the whole request (B). */
  readonly draws: number;
  readonly assets: number;
  /** First draw this accumulator holds a row for. */
  readonly firstDraw: number;
  /** Rows held: draws firstDraw .. firstDraw + slotCount − 1. */
  readonly slotCount: number;
  private readonly weights: Float64Array;
  private readonly status: Uint8Array;

  constructor(draws: number, assets: number, range?: SlotRange) {
    checkDrawCount(draws);
    checkAssetCount(assets);
    const { start, end } = checkSlotRange(draws, range);
    this.draws = draws;
    this.assets = assets;
    this.firstDraw = start;
    this.slotCount = end - start;
    this.weights = new Float64Array(storedValues(this.slotCount, assets)).fill(Number.NaN);
    this.status = new Uint8Array(this.slotCount);
  }

  /** True when the rows cover every draw of the request (summaries need that). */
  get whole(): boolean {
    return this.slotCount === this.draws;
  }

  private slotOf(drawIndex: number): number {
    return slotOfDraw(drawIndex, this.draws, this.firstDraw, this.slotCount);
  }

  /**
   * Stores w_b = weights[offset .. offset + N) in slot drawIndex (copied; no allocation). Any
   * non-finite entry records a failed draw. Each slot once only.
   */
  record(drawIndex: number, weights: ArrayLike<number>, offset = 0): void {
    const slot = this.slotOf(drawIndex);
    if (this.status[slot] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} already recorded`);
    const n = this.assets;
    let finite = true;
    for (let i = 0; i < n; i++) {
      if (!Number.isFinite(weights[offset + i])) {
        finite = false;
        break;
      }
    }
    if (!finite) {
      this.status[slot] = DRAW_FAILED;
      return;
    }
    const row = slot * n;
    for (let i = 0; i < n; i++) this.weights[row + i] = weights[offset + i];
    this.status[slot] = DRAW_SUCCEEDED;
  }

  recordFailure(drawIndex: number): void {
    const slot = this.slotOf(drawIndex);
    if (this.status[slot] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} already recorded`);
    this.status[slot] = DRAW_FAILED;
  }

  /** Adds another accumulator's rows (same B and N, its range inside this one's, disjoint recorded draws). */
  merge(other: WeightAccumulator): void {
    if (other.draws !== this.draws || other.assets !== this.assets) {
      throw new RangeError('cannot merge weight accumulators of different shapes');
    }
    const offset = other.firstDraw - this.firstDraw;
    mergeDrawStatus(this.status, other.status, offset);
    const n = this.assets;
    for (let b = 0; b < other.slotCount; b++) {
      if (other.status[b] === DRAW_NOT_RECORDED) continue;
      this.status[offset + b] = other.status[b];
      this.weights.set(other.weights.subarray(b * n, (b + 1) * n), (offset + b) * n);
    }
  }

  counts(): DrawCounts {
    return countDraws(this.status);
  }

  /** The slots × N block (NaN rows = failed or not recorded; draw b in row b − firstDraw), e.g. for risk contributions per draw. */
  rows(): Float64Array {
    return this.weights;
  }

  /**
   * Per-asset band statistics. `proposal` holds the proposal's weights (N) whose mid-rank
   * percentile is reported; `selectionThreshold` defaults to 1e-4.
   */
  summarize(proposal: ArrayLike<number>, selectionThreshold = DEFAULT_SELECTION_THRESHOLD): WeightSummary {
    if (!this.whole) throw new RangeError('summaries need every draw: merge the ranges first');
    if (proposal.length < this.assets) throw new RangeError(`proposal has ${proposal.length} weights, need ${this.assets}`);
    const n = this.assets;
    const B = this.draws;
    const workspace = createQuantileErrorWorkspace(B);
    const bands = new Float64Array(BAND_PROBABILITIES.length);
    const edgeErrors = new Float64Array(EDGE_PROBABILITIES.length);
    const meanOfOptima = new Float64Array(n);
    const perAsset: AssetWeightSummary[] = [];
    const quantileErrorMethod = 'order-statistic' as const;
    for (let i = 0; i < n; i++) {
      const moments = stridedMoments(this.weights, i, n, B);
      // Selection rate, read before the sort reuses the scratch buffer.
      let selected = 0;
      for (let b = 0, at = i; b < B; b++, at += n) {
        if (Math.abs(this.weights[at]) > selectionThreshold) selected++; // NaN compares false
      }
      const m = quantilesOfStrided(this.weights, i, n, B, BAND_PROBABILITIES, workspace.sort, bands);
      const proposalPercentile = midRankPercentileSorted(workspace.sort, m, proposal[i]);
      const proposalPercentileStdErr = midRankStdErr(workspace.sort, m, proposal[i]);
      // workspace.sort holds this asset's successful weights, sorted (quantilesOfStrided above).
      sortedQuantileStdErrs(workspace.sort, m, EDGE_PROBABILITIES, edgeErrors);
      const selectionRate = m > 0 ? selected / m : Number.NaN;
      const offMode = m - longestTie(workspace.sort, m, 0);
      const minority = Math.min(selected, m - selected);
      meanOfOptima[i] = moments.mean;
      perAsset.push({
        mean: moments.mean,
        meanStdErr: offMode > 0 && offMode < MIN_DRAWS_OFF_MODE ? Number.NaN : moments.stdErr,
        sd: moments.sd,
        sdStdErr: sdStdErrOfStrided(this.weights, i, n, B),
        p05: bands[0],
        p25: bands[1],
        p50: bands[2],
        p75: bands[3],
        p95: bands[4],
        p05StdErr: edgeErrors[0],
        p95StdErr: edgeErrors[1],
        p50StdErr: edgeErrors[2],
        bandStdErr: Math.max(edgeErrors[0], edgeErrors[1]),
        selectionRate,
        selectionRateStdErr: m > 1 && !(minority > 0 && minority < MIN_DRAWS_OFF_MODE) ? Math.sqrt((selectionRate * (1 - selectionRate)) / (m - 1)) : Number.NaN,
        proposalPercentile,
        proposalPercentileStdErr,
      });
    }
    return { ...this.counts(), perAsset, meanOfOptima, selectionThreshold, quantileErrorMethod };
  }

  toState(): WeightAccumulatorState {
    const weights: number[] = new Array<number>(this.weights.length);
    const n = this.assets;
    for (let b = 0; b < this.slotCount; b++) {
      const ok = this.status[b] === DRAW_SUCCEEDED;
      for (let i = 0; i < n; i++) weights[b * n + i] = ok ? this.weights[b * n + i] : 0;
    }
    const range = this.whole ? {} : { start: this.firstDraw, end: this.firstDraw + this.slotCount };
    return { draws: this.draws, assets: n, ...range, status: Array.from(this.status), weights };
  }

  static fromState(state: WeightAccumulatorState): WeightAccumulator {
    const start = state.start ?? 0;
    const accumulator = new WeightAccumulator(state.draws, state.assets, { start, end: state.end ?? state.draws });
    const slots = accumulator.slotCount;
    if (state.status.length !== slots || state.weights.length !== slots * state.assets) {
      throw new RangeError('weight accumulator state has the wrong length');
    }
    for (let b = 0; b < slots; b++) {
      if (state.status[b] === DRAW_SUCCEEDED) accumulator.record(start + b, state.weights, b * state.assets);
      else if (state.status[b] === DRAW_FAILED) accumulator.recordFailure(start + b);
    }
    return accumulator;
  }
}

/**
 * sd/√n of the mid-rank score s_b = 100·(1{w_b < x} + ½·1{w_b = x}) over n sorted draws:
 * with a draws below and e equal, Σs = 100(a + e/2) and Σs² = 100²(a + e/4).
 */
function midRankStdErr(sorted: Float64Array, n: number, x: number): number {
  if (n < 2 || Number.isNaN(x)) return Number.NaN;
  let below = 0;
  let equal = 0;
  for (let k = 0; k < n; k++) {
    if (sorted[k] < x) below++;
    else if (sorted[k] === x) equal++;
  }
  const mean = (100 * (below + 0.5 * equal)) / n;
  const meanSquare = (100 * 100 * (below + 0.25 * equal)) / n;
  const variance = Math.max(0, ((meanSquare - mean * mean) * n) / (n - 1));
  return Math.sqrt(variance / n);
}

