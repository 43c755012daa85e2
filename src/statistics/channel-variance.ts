import { batchCount, batchOfDraw, batchStart, jackknifeStdErr, UNIT_INTERVAL_MAX_SD } from './batch-means.js';
import { checkAssetCount, checkDrawCount, checkSlotRange, DRAW_FAILED, DRAW_NOT_RECORDED, DRAW_SUCCEEDED, mergeDrawStatus, slotOfDraw, type SlotRange } from './scalar-accumulator.js';

/**
 * Mean-driven share of weight variability (design: "channels"). The mean-only channel resamples
 * μ with Σ at base, the covariance-only channel resamples Σ with μ at base (common random
 * numbers). For asset i, meanDrivenShare_i = Var_mean(w_i) / (Var_mean(w_i) + Var_cov(w_i))
 * (0 when both are 0); overall = Σ_i Var_mean,i / Σ_i (Var_mean,i + Var_cov,i). Variances are
 * sample variances (divisor n − 1) over each channel's successful draws.
 *
 * Streaming and order-independent, memory O(batches × N): per batch, asset and channel the
 * accumulator keeps Σw and Σw² as EXACT sums, plus min and max. An accumulator for a range of the
 * draws (a thread's or shard's chunk) holds only the batches the range touches and its draws'
 * status, so a chunk costs memory and wire bytes in proportion to its own draws. Exactness is what makes the
 * result bit-identical however draws are ordered or split (floating-point sums otherwise depend
 * on order). Each value is cut into five pieces on fixed grids 2^24, 2^−4, 2^−32, 2^−60, 2^−88
 * (piece = round(rest / g)·g; the remainder is exact); each grid's pieces are integers times g
 * below 2^28, so up to 2^25 draws add without rounding (the idea of pre-rounding to fixed
 * boundaries, as in Demmel & Nguyen 2013, "Fast reproducible floating-point summation", ARITH 21).
 * Only |rest| ≤ 2^−89 per value is dropped, deterministically. w² enters exactly as the
 * double-double Dekker product (Dekker 1971, "A floating-point technique for extending the
 * available precision", Numer. Math. 18). The variance n·Σw² − (Σw)² is then formed in
 * double-double, so the usual cancellation of the one-pass formula cannot bite; with exact sums no
 * pairwise (Chan, Golub & LeVeque) combination is needed. A channel whose min equals its max has
 * variance exactly 0, so methods that ignore the means report a share of exactly 0.
 *
 * Monte Carlo error of `overall`: the delete-one-group jackknife over the stored groups (groups
 * by draw index, see batch-means.ts): `overall` recomputed from the exact sums of all groups but
 * one, for each group in turn; 0.5 (the largest sd of a [0, 1] quantity) with fewer than
 * 2 usable groups.
 *
 * Rare moves. A channel that moves the weights in only a few draws (Kelly at a corner: the
 * covariance-only channel changes the corner in about 1 draw of 8000 on the D1 case) has a
 * variance carried by those few draws. Across reruns the number of such draws is roughly Poisson
 * with a small mean λ, so the share's spread is about √λ·δ while the errors the runs report
 * average λ·δ (0 in every run that saw none): ratio 1/√λ, 4–6 at 200–500 draws. No estimator
 * built from the draws can see a move that none of them made, so when a channel that can move
 * (see ChannelSummaryOptions) has its spread concentrated in fewer than
 * MIN_EFFECTIVE_GROUPS effective groups — Kish's effective number (Σ_k T_k)²/Σ_k T_k² of the
 * groups' contributions T_k to the channel's sum of squared deviations (Kish 1965, Survey
 * Sampling, §11.7; 0 when the channel never moved) — the error is not estimable: NaN, method
 * 'not-estimable', and the draws that would give about MIN_EFFECTIVE_GROUPS moves are reported
 * (draws × target / effective groups; with none seen, the rule of three bounds the move rate by
 * 3/draws at 95 % (Hanley & Lippman-Hand 1983, JAMA 249), so at least draws × target / 3).
 * A share that cannot move at all (both channels constant; or the mean-only channel fixed by
 * construction, as for methods that ignore the means) has error exactly 0.
 */

export type VarianceChannel = 'mean-only' | 'covariance-only';

const LEVELS = 5;
const GRID = [2 ** 24, 2 ** -4, 2 ** -32, 2 ** -60, 2 ** -88];
const INVERSE_GRID = [2 ** -24, 2 ** 4, 2 ** 32, 2 ** 60, 2 ** 88];
/** Veltkamp splitter 2^27 + 1 for doubles (Dekker 1971). */
const SPLITTER = 134217729;

/**
 * Smallest Kish effective number of groups carrying a movable channel's spread for the jackknife
 * error to be reported (fewer: the spread rests on a few rare draws, see the module comment).
 * With fewer than 10 groups the target is half of them.
 */
export const MIN_EFFECTIVE_GROUPS = 5;

/** Which channels cannot move by construction (their constancy is not a sampling accident). */
export interface ChannelSummaryOptions {
  /** The method ignores the means: the engine records the base weights in the mean-only channel. */
  readonly meanChannelFixed?: boolean;
  /** The method ignores the risk model (its covariance-only channel is constant by construction). */
  readonly covarianceChannelFixed?: boolean;
}

export interface MeanDrivenShareSummary {
  /** Σ_i Var_mean,i / Σ_i (Var_mean,i + Var_cov,i), 0 when the denominator is 0. */
  readonly overall: number;
  /** NaN when not estimable (a movable channel's spread rests on too few draws). */
  readonly overallStdErr: number;
  readonly overallErrorMethod: 'jackknife' | 'bound' | 'exact' | 'not-estimable';
  /** Kish effective number of groups carrying each channel's spread (0: never moved). */
  readonly meanChannelEffectiveGroups: number;
  readonly covarianceChannelEffectiveGroups: number;
  /** The effective-group target used (MIN_EFFECTIVE_GROUPS, or half the groups when fewer than 10). */
  readonly effectiveGroupTarget: number;
  /** When not estimable: roughly how many draws would let the error be estimated (else 0). */
  readonly drawsForEstimableError: number;
  /** Groups whose leave-one-out share could be computed (used for the error). */
  readonly usableBatches: number;
  readonly perAsset: Float64Array;
  readonly meanChannelVariance: Float64Array;
  readonly covarianceChannelVariance: Float64Array;
  readonly meanChannelDraws: number;
  readonly covarianceChannelDraws: number;
  readonly meanChannelFailures: number;
  readonly covarianceChannelFailures: number;
}

/** Where a wire codec reads or writes (the shape of src/scale's cursor: typed arrays and positions). */
export interface ChannelWireCursor {
  readonly f64: Float64Array;
  f64At: number;
  readonly u8: Uint8Array;
  u8At: number;
}

/** Doubles per asset of a batch cell on the wire: 5 + 5 exact-sum pieces, min, max. */
const WIRE_CELL_VALUES = 2 * LEVELS + 2;

/** The batches the draws [start, end) touch: the first and how many. */
function touchedBatches(draws: number, batches: number, range: SlotRange): { first: number; touched: number } {
  const first = batchOfDraw(draws, batches, range.start);
  return { first, touched: batchOfDraw(draws, batches, range.end - 1) - first + 1 };
}

export class ChannelVarianceAccumulator {
  readonly draws: number;
  readonly assets: number;
  /** Batches of the whole request: batchCount(B), at least 1. */
  readonly batches: number;
  /** The draws held: [firstDraw, firstDraw + drawSpan) (all B for a whole run). */
  readonly firstDraw: number;
  readonly drawSpan: number;
  /** The batches those draws touch: [firstBatch, firstBatch + batchSpan). */
  readonly firstBatch: number;
  readonly batchSpan: number;
  /** status[c·drawSpan + (b − firstDraw)] for channel c (0 mean-only, 1 covariance-only). */
  private readonly status: Uint8Array;
  /** counts[c·batchSpan + (k − firstBatch)]: successful draws of channel c in batch k. */
  private readonly counts: Float64Array;
  /** pieces[((c·batchSpan + k − firstBatch)·N + i)·LEVELS + level]. */
  private readonly sumPieces: Float64Array;
  private readonly squarePieces: Float64Array;
  /** minimum[(c·batchSpan + k − firstBatch)·N + i]. */
  private readonly minimum: Float64Array;
  private readonly maximum: Float64Array;

  /** `range`: the draws this accumulator holds (default all); the summaries need all of them. */
  constructor(draws: number, assets: number, range?: SlotRange) {
    checkDrawCount(draws);
    checkAssetCount(assets);
    const { start, end } = checkSlotRange(draws, range);
    this.draws = draws;
    this.assets = assets;
    this.batches = Math.max(1, batchCount(draws));
    this.firstDraw = start;
    this.drawSpan = end - start;
    this.firstBatch = batchOfDraw(draws, this.batches, start);
    this.batchSpan = batchOfDraw(draws, this.batches, end - 1) - this.firstBatch + 1;
    const cells = 2 * this.batchSpan * assets;
    this.status = new Uint8Array(2 * this.drawSpan);
    this.counts = new Float64Array(2 * this.batchSpan);
    this.sumPieces = new Float64Array(cells * LEVELS);
    this.squarePieces = new Float64Array(cells * LEVELS);
    this.minimum = new Float64Array(cells).fill(Number.POSITIVE_INFINITY);
    this.maximum = new Float64Array(cells).fill(Number.NEGATIVE_INFINITY);
  }

  /** Memory in doubles of a whole run's accumulator: 2 channels × batches × N × (2·5 pieces + min + max). */
  static storedValues(draws: number, assets: number): number {
    return 2 * Math.max(1, batchCount(draws)) * assets * (2 * LEVELS + 2);
  }

  /** Doubles this accumulator holds (its batches only). */
  get storedValueCount(): number {
    return this.sumPieces.length + this.squarePieces.length + this.minimum.length + this.maximum.length + this.counts.length;
  }

  /** Whether it holds every draw of the request (the summaries need that). */
  get whole(): boolean {
    return this.drawSpan === this.draws;
  }

  private requireWhole(what: string): void {
    if (!this.whole) throw new Error(`${what} needs the accumulator of every draw (this one holds draws ${this.firstDraw}..${this.firstDraw + this.drawSpan - 1})`);
  }

  /**
   * Folds draw `drawIndex`'s weights of one channel (weights[offset .. offset + N)). Any
   * non-finite entry records a failed draw for that channel. Allocation-free; each (draw,
   * channel) once only.
   */
  record(drawIndex: number, channel: VarianceChannel, weights: ArrayLike<number>, offset = 0): void {
    const c = channel === 'mean-only' ? 0 : 1;
    const slot = c * this.drawSpan + slotOfDraw(drawIndex, this.draws, this.firstDraw, this.drawSpan);
    if (this.status[slot] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} (${channel}) already recorded`);
    const n = this.assets;
    for (let i = 0; i < n; i++) {
      if (!Number.isFinite(weights[offset + i])) {
        this.status[slot] = DRAW_FAILED;
        return;
      }
    }
    this.status[slot] = DRAW_SUCCEEDED;
    const batchCell = c * this.batchSpan + batchOfDraw(this.draws, this.batches, drawIndex) - this.firstBatch;
    this.counts[batchCell] += 1;
    const cellBase = batchCell * n;
    for (let i = 0; i < n; i++) {
      const w = weights[offset + i];
      const cell = cellBase + i;
      if (w < this.minimum[cell]) this.minimum[cell] = w;
      if (w > this.maximum[cell]) this.maximum[cell] = w;
      addExact(this.sumPieces, cell * LEVELS, w);
      // Exact square w² = hi + lo (Dekker's product).
      const hi = w * w;
      const lo = productError(w, w, hi);
      addExact(this.squarePieces, cell * LEVELS, hi);
      addExact(this.squarePieces, cell * LEVELS, lo);
    }
  }

  recordFailure(drawIndex: number, channel: VarianceChannel): void {
    const slot = (channel === 'mean-only' ? 0 : this.drawSpan) + slotOfDraw(drawIndex, this.draws, this.firstDraw, this.drawSpan);
    if (this.status[slot] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} (${channel}) already recorded`);
    this.status[slot] = DRAW_FAILED;
  }

  /**
   * Adds another accumulator over disjoint draws (same B and N) whose draws lie inside this one's;
   * exact, so order-free.
   */
  merge(other: ChannelVarianceAccumulator): void {
    if (other.draws !== this.draws || other.assets !== this.assets) {
      throw new RangeError('cannot merge channel-variance accumulators of different shapes');
    }
    const range = { start: other.firstDraw, end: other.firstDraw + other.drawSpan };
    for (let c = 0; c < 2; c++) this.mergeStatus(range, other.status.subarray(c * other.drawSpan, (c + 1) * other.drawSpan), c);
    const cellValues = this.assets * LEVELS;
    for (let from = 0; from < 2 * other.batchSpan; from++) {
      const c = from < other.batchSpan ? 0 : 1;
      const into = c * this.batchSpan + other.firstBatch + (from - c * other.batchSpan) - this.firstBatch;
      this.addBatchCell(into, other.counts[from], other.sumPieces.subarray(from * cellValues), other.squarePieces.subarray(from * cellValues), other.minimum, other.maximum, from * this.assets);
    }
  }

  /**
   * Writes the draws [start, end) (inside this accumulator's) in the partial wire form: each
   * channel's per-draw status (1 byte), then per channel and touched batch its count and, per
   * asset, the 5 + 5 exact-sum pieces, min and max (0 for a cell with no draw). A batch's cells hold
   * every draw recorded in it, so no draw of a touched batch outside the range may be recorded here.
   */
  writeWire(range: SlotRange, cursor: ChannelWireCursor): void {
    const span = range.end - range.start;
    if (range.start < this.firstDraw || range.end > this.firstDraw + this.drawSpan) throw new RangeError(`the wire range ${range.start}..${range.end - 1} lies outside this accumulator's draws`);
    const { first, touched } = touchedBatches(this.draws, this.batches, range);
    const batchDrawsFrom = Math.max(this.firstDraw, batchStart(this.draws, this.batches, first));
    const batchDrawsTo = Math.min(this.firstDraw + this.drawSpan, batchStart(this.draws, this.batches, first + touched));
    for (let c = 0; c < 2; c++) {
      for (let b = batchDrawsFrom; b < batchDrawsTo; b++) {
        const status = this.status[c * this.drawSpan + b - this.firstDraw];
        const inside = b >= range.start && b < range.end;
        if (inside && status === DRAW_NOT_RECORDED) throw new Error(`channel accumulator: draw ${b} not recorded`);
        if (!inside && status !== DRAW_NOT_RECORDED) throw new Error(`channel accumulator: draw ${b} of a batch the range ${range.start}..${range.end - 1} touches is recorded too`);
        if (inside) cursor.u8[cursor.u8At + c * span + b - range.start] = status;
      }
    }
    cursor.u8At += 2 * span;
    const n = this.assets;
    const f64 = cursor.f64;
    let at = cursor.f64At;
    for (let c = 0; c < 2; c++) {
      for (let k = 0; k < touched; k++) {
        const batchCell = c * this.batchSpan + first - this.firstBatch + k;
        f64[at++] = this.counts[batchCell];
        for (let i = 0; i < n; i++) {
          const cell = batchCell * n + i;
          for (let level = 0; level < LEVELS; level++) f64[at++] = this.sumPieces[cell * LEVELS + level];
          for (let level = 0; level < LEVELS; level++) f64[at++] = this.squarePieces[cell * LEVELS + level];
          f64[at++] = Number.isFinite(this.minimum[cell]) ? this.minimum[cell] : 0;
          f64[at++] = Number.isFinite(this.maximum[cell]) ? this.maximum[cell] : 0;
        }
      }
    }
    cursor.f64At = at;
  }

  /** Doubles and bytes writeWire writes for the draws [start, end) of a request of `draws` over `assets`. */
  static wireSize(draws: number, assets: number, range: SlotRange): { f64: number; u8: number } {
    const { touched } = touchedBatches(draws, Math.max(1, batchCount(draws)), range);
    return { f64: 2 * touched * (1 + assets * WIRE_CELL_VALUES), u8: 2 * (range.end - range.start) };
  }

  /**
   * Merges draws [start, end) read from the partial wire form (see writeWire) into this
   * accumulator, whose draws must include them and hold none of them yet. Exact, so order-free.
   */
  readWire(range: SlotRange, cursor: ChannelWireCursor): void {
    const span = range.end - range.start;
    for (let c = 0; c < 2; c++) {
      this.mergeStatus(range, cursor.u8.subarray(cursor.u8At, cursor.u8At + span), c);
      cursor.u8At += span;
    }
    const { first, touched } = touchedBatches(this.draws, this.batches, range);
    const n = this.assets;
    // Per cell on the wire: 5 sum pieces, 5 square pieces, min, max (WIRE_CELL_VALUES); cell i of a
    // batch starts at 1 + i·WIRE_CELL_VALUES after the batch's count.
    for (let c = 0; c < 2; c++) {
      for (let k = 0; k < touched; k++) {
        const at = cursor.f64At;
        const row = cursor.f64.subarray(at + 1, at + 1 + n * WIRE_CELL_VALUES);
        this.addWireBatchCell(c * this.batchSpan + first - this.firstBatch + k, cursor.f64[at], row);
        cursor.f64At = at + 1 + n * WIRE_CELL_VALUES;
      }
    }
  }

  /** Records channel c's statuses of the draws [start, end) (`source`, one byte a draw), refusing a draw held twice. */
  private mergeStatus(range: SlotRange, source: Uint8Array, c: number): void {
    const drawOffset = range.start - this.firstDraw;
    if (drawOffset < 0 || drawOffset + source.length > this.drawSpan) throw new RangeError('cannot merge: the source range lies outside the target range');
    const target = this.status.subarray(c * this.drawSpan, (c + 1) * this.drawSpan);
    mergeDrawStatus(target, source, drawOffset);
    for (let s = 0; s < source.length; s++) if (source[s] !== DRAW_NOT_RECORDED) target[drawOffset + s] = source[s];
  }

  /**
   * Adds one batch cell of another accumulator: its count, the exact pieces of its N assets (from
   * `sums`/`squares`, N·LEVELS values each) and the min/max at `extremaAt` of `low`/`high`.
   */
  private addBatchCell(into: number, count: number, sums: Float64Array, squares: Float64Array, low: Float64Array, high: Float64Array, extremaAt: number): void {
    this.counts[into] += count;
    const n = this.assets;
    for (let i = 0; i < n; i++) {
      const cell = into * n + i;
      for (let level = 0; level < LEVELS; level++) {
        this.sumPieces[cell * LEVELS + level] += sums[i * LEVELS + level];
        this.squarePieces[cell * LEVELS + level] += squares[i * LEVELS + level];
      }
      if (low[extremaAt + i] < this.minimum[cell]) this.minimum[cell] = low[extremaAt + i];
      if (high[extremaAt + i] > this.maximum[cell]) this.maximum[cell] = high[extremaAt + i];
    }
  }

  /** Adds one batch cell read from the wire (count, then per asset WIRE_CELL_VALUES values). */
  private addWireBatchCell(into: number, count: number, row: Float64Array): void {
    this.counts[into] += count;
    const n = this.assets;
    for (let i = 0; i < n; i++) {
      const cell = into * n + i;
      const at = i * WIRE_CELL_VALUES;
      for (let level = 0; level < LEVELS; level++) {
        this.sumPieces[cell * LEVELS + level] += row[at + level];
        this.squarePieces[cell * LEVELS + level] += row[at + LEVELS + level];
      }
      // A cell with no draw carries 0 for its min and max: not a value.
      if (count > 0) {
        if (row[at + 2 * LEVELS] < this.minimum[cell]) this.minimum[cell] = row[at + 2 * LEVELS];
        if (row[at + 2 * LEVELS + 1] > this.maximum[cell]) this.maximum[cell] = row[at + 2 * LEVELS + 1];
      }
    }
  }

  summarize(options: ChannelSummaryOptions = {}): MeanDrivenShareSummary {
    this.requireWhole('the mean-driven share');
    const n = this.assets;
    const m = this.batches;
    const meanChannelVariance = new Float64Array(n);
    const covarianceChannelVariance = new Float64Array(n);
    const perAsset = new Float64Array(n);
    const totalSum = new Float64Array(LEVELS);
    const totalSquare = new Float64Array(LEVELS);
    let numerator = 0;
    let denominator = 0;
    for (let c = 0; c < 2; c++) {
      let count = 0;
      for (let k = 0; k < m; k++) count += this.counts[c * m + k];
      const target = c === 0 ? meanChannelVariance : covarianceChannelVariance;
      for (let i = 0; i < n; i++) {
        totalSum.fill(0);
        totalSquare.fill(0);
        let low = Number.POSITIVE_INFINITY;
        let high = Number.NEGATIVE_INFINITY;
        for (let k = 0; k < m; k++) {
          const cell = (c * m + k) * n + i;
          for (let level = 0; level < LEVELS; level++) {
            totalSum[level] += this.sumPieces[cell * LEVELS + level];
            totalSquare[level] += this.squarePieces[cell * LEVELS + level];
          }
          if (this.minimum[cell] < low) low = this.minimum[cell];
          if (this.maximum[cell] > high) high = this.maximum[cell];
        }
        target[i] = varianceFromPieces(count, totalSum, 0, totalSquare, 0, low, high);
      }
    }
    for (let i = 0; i < n; i++) {
      const vm = meanChannelVariance[i];
      const vc = covarianceChannelVariance[i];
      perAsset[i] = shareOf(vm, vc);
      numerator += vm;
      denominator += vm + vc;
    }
    const overall = denominator > 0 ? numerator / denominator : 0;

    const looShares = this.leaveOneGroupOutShares();
    let usableBatches = 0;
    for (let k = 0; k < m; k++) if (Number.isFinite(looShares[k])) usableBatches++;
    const useBatches = usableBatches >= 2;
    const meanCounts = this.channelCounts(0);
    const covarianceCounts = this.channelCounts(1);
    const meanChannelEffectiveGroups = this.effectiveGroups(0);
    const covarianceChannelEffectiveGroups = this.effectiveGroups(1);
    const error = shareError({
      fixed: [options.meanChannelFixed === true, options.covarianceChannelFixed === true],
      effective: [meanChannelEffectiveGroups, covarianceChannelEffectiveGroups],
      moved: denominator > 0,
      groups: m,
      draws: this.draws,
      useBatches,
      jackknife: () => jackknifeStdErr(looShares, m),
    });
    return {
      overall,
      overallStdErr: error.stdErr,
      overallErrorMethod: error.method,
      meanChannelEffectiveGroups,
      covarianceChannelEffectiveGroups,
      effectiveGroupTarget: effectiveGroupTarget(m),
      drawsForEstimableError: error.drawsNeeded,
      usableBatches,
      perAsset,
      meanChannelVariance,
      covarianceChannelVariance,
      meanChannelDraws: meanCounts.succeeded,
      covarianceChannelDraws: covarianceCounts.succeeded,
      meanChannelFailures: meanCounts.failed,
      covarianceChannelFailures: covarianceCounts.failed,
    };
  }

  /**
   * The overall mean-driven share with group k left out, for k = 0..m−1 (NaN when fewer than 2
   * draws of either channel remain, or with a single group). Leave-one-out sums are the exact
   * totals minus group k's exact pieces (both multiples of each grid), so they are exact too.
   */
  leaveOneGroupOutShares(): Float64Array {
    this.requireWhole('the leave-one-group-out shares');
    const n = this.assets;
    const m = this.batches;
    const out = new Float64Array(m).fill(Number.NaN);
    if (m < 2) return out;
    const totalSum = new Float64Array(2 * n * LEVELS);
    const totalSquare = new Float64Array(2 * n * LEVELS);
    const totalCount = [0, 0];
    for (let c = 0; c < 2; c++) {
      for (let k = 0; k < m; k++) {
        totalCount[c] += this.counts[c * m + k];
        for (let i = 0; i < n; i++) {
          const cell = (c * m + k) * n + i;
          for (let level = 0; level < LEVELS; level++) {
            totalSum[(c * n + i) * LEVELS + level] += this.sumPieces[cell * LEVELS + level];
            totalSquare[(c * n + i) * LEVELS + level] += this.squarePieces[cell * LEVELS + level];
          }
        }
      }
    }
    const sum = new Float64Array(LEVELS);
    const square = new Float64Array(LEVELS);
    for (let k = 0; k < m; k++) {
      const counts = [totalCount[0] - this.counts[k], totalCount[1] - this.counts[m + k]];
      if (counts[0] < 2 || counts[1] < 2) continue;
      let numerator = 0;
      let denominator = 0;
      for (let i = 0; i < n; i++) {
        let meanVariance = 0;
        for (let c = 0; c < 2; c++) {
          const cell = (c * m + k) * n + i;
          for (let level = 0; level < LEVELS; level++) {
            sum[level] = totalSum[(c * n + i) * LEVELS + level] - this.sumPieces[cell * LEVELS + level];
            square[level] = totalSquare[(c * n + i) * LEVELS + level] - this.squarePieces[cell * LEVELS + level];
          }
          let low = Number.POSITIVE_INFINITY;
          let high = Number.NEGATIVE_INFINITY;
          for (let j = 0; j < m; j++) {
            if (j === k) continue;
            const other = (c * m + j) * n + i;
            if (this.minimum[other] < low) low = this.minimum[other];
            if (this.maximum[other] > high) high = this.maximum[other];
          }
          const variance = varianceFromPieces(counts[c], sum, 0, square, 0, low, high);
          if (c === 0) meanVariance = variance;
          else {
            numerator += meanVariance;
            denominator += meanVariance + variance;
          }
        }
      }
      out[k] = denominator > 0 ? numerator / denominator : 0;
    }
    return out;
  }

  /**
   * Kish's effective number of groups (Σ_k T_k)²/Σ_k T_k² carrying channel c's spread, T_k the
   * group's contribution Σ_i Σ_{b∈k} (w_bi − w̄_i)² = within-group sum of squares (double-double,
   * exactly 0 for a constant group) + n_k(w̄_ki − w̄_i)². 0 when the channel never moved (every
   * asset's min equals its max over all groups).
   */
  effectiveGroups(c: number): number {
    this.requireWhole('the effective number of groups');
    const n = this.assets;
    const m = this.batches;
    let total = 0;
    for (let k = 0; k < m; k++) total += this.counts[c * m + k];
    if (total < 2) return 0;
    const contribution = new Float64Array(m);
    const scratch = new Float64Array(LEVELS);
    let moved = false;
    for (let i = 0; i < n; i++) {
      let low = Number.POSITIVE_INFINITY;
      let high = Number.NEGATIVE_INFINITY;
      for (let k = 0; k < m; k++) {
        const cell = (c * m + k) * n + i;
        if (this.minimum[cell] < low) low = this.minimum[cell];
        if (this.maximum[cell] > high) high = this.maximum[cell];
      }
      if (low === high) continue;
      moved = true;
      scratch.fill(0);
      for (let k = 0; k < m; k++) {
        const cell = (c * m + k) * n + i;
        for (let level = 0; level < LEVELS; level++) scratch[level] += this.sumPieces[cell * LEVELS + level];
      }
      piecesToDoubleDouble(scratch, 0);
      const mean = (ddHigh + ddLow) / total;
      for (let k = 0; k < m; k++) {
        const count = this.counts[c * m + k];
        if (count === 0) continue;
        const cell = (c * m + k) * n + i;
        const within = count < 2 ? 0 : (count - 1) * varianceFromPieces(count, this.sumPieces, cell * LEVELS, this.squarePieces, cell * LEVELS, this.minimum[cell], this.maximum[cell]);
        piecesToDoubleDouble(this.sumPieces, cell * LEVELS);
        const offset = (ddHigh + ddLow) / count - mean;
        contribution[k] += within + count * offset * offset;
      }
    }
    if (!moved) return 0;
    let sum = 0;
    let squares = 0;
    for (let k = 0; k < m; k++) {
      sum += contribution[k];
      squares += contribution[k] * contribution[k];
    }
    return squares > 0 ? (sum * sum) / squares : 0;
  }

  private channelCounts(c: number): { succeeded: number; failed: number } {
    let succeeded = 0;
    let failed = 0;
    for (let b = 0; b < this.draws; b++) {
      const s = this.status[c * this.drawSpan + b];
      if (s === DRAW_SUCCEEDED) succeeded++;
      else if (s === DRAW_FAILED) failed++;
    }
    return { succeeded, failed };
  }
}

/** The effective-group target for m groups: MIN_EFFECTIVE_GROUPS, or m/2 with fewer than 10 groups. */
export function effectiveGroupTarget(groups: number): number {
  return Math.min(MIN_EFFECTIVE_GROUPS, groups / 2);
}

/**
 * The share's error from what the channels show (see the module comment): exactly 0 when the
 * share cannot move, NaN ('not-estimable') when a movable channel's spread rests on fewer than
 * the target effective groups, else the jackknife (or the 0.5 bound below 2 groups).
 */
export function shareError(input: {
  readonly fixed: readonly [boolean, boolean];
  readonly effective: readonly [number, number];
  /** Some channel moved (Σ_i Var_mean,i + Var_cov,i > 0). */
  readonly moved: boolean;
  readonly groups: number;
  readonly draws: number;
  readonly useBatches: boolean;
  readonly jackknife: () => number;
}): { stdErr: number; method: MeanDrivenShareSummary['overallErrorMethod']; drawsNeeded: number } {
  // A channel fixed by construction pins the share (0 if the mean-only one, 1 if the
  // covariance-only one, whatever the draws); nothing moved: nothing to err.
  if (input.fixed[0] || input.fixed[1] || !input.moved) return { stdErr: 0, method: 'exact', drawsNeeded: 0 };
  if (!input.useBatches) return { stdErr: UNIT_INTERVAL_MAX_SD, method: 'bound', drawsNeeded: 0 };
  const target = effectiveGroupTarget(input.groups);
  let drawsNeeded = 0;
  for (let c = 0; c < 2; c++) {
    if (input.fixed[c] || input.effective[c] >= target) continue;
    // Moves seen in e effective groups of B draws: about B·target/e draws give target of them;
    // none seen: the rule of three (rate < 3/B) makes it at least B·target/3.
    const needed = Math.ceil((input.draws * target) / (input.effective[c] > 0 ? input.effective[c] : 3));
    drawsNeeded = Math.max(drawsNeeded, needed);
  }
  if (drawsNeeded > 0) return { stdErr: Number.NaN, method: 'not-estimable', drawsNeeded };
  return { stdErr: input.jackknife(), method: 'jackknife', drawsNeeded: 0 };
}

/** Var_mean/(Var_mean + Var_cov), 0 when both are 0. */
function shareOf(meanVariance: number, covarianceVariance: number): number {
  const total = meanVariance + covarianceVariance;
  return total > 0 ? meanVariance / total : 0;
}

/** Adds `value` to the fixed-grid pieces at pieces[base .. base + LEVELS) without rounding. */
function addExact(pieces: Float64Array, base: number, value: number): void {
  let rest = value;
  for (let level = 0; level < LEVELS; level++) {
    const piece = Math.round(rest * INVERSE_GRID[level]) * GRID[level];
    pieces[base + level] += piece;
    rest -= piece;
  }
}

/** Error of the rounded product hi = fl(a·b): a·b = hi + error exactly (Dekker 1971). */
function productError(a: number, b: number, hi: number): number {
  const aSplit = SPLITTER * a;
  const aHigh = aSplit - (aSplit - a);
  const aLow = a - aHigh;
  const bSplit = SPLITTER * b;
  const bHigh = bSplit - (bSplit - b);
  const bLow = b - bHigh;
  return aLow * bLow - (((hi - aHigh * bHigh) - aLow * bHigh) - aHigh * bLow);
}

/** Knuth's TwoSum error: a + b = s + error exactly for s = fl(a + b). */
function sumError(a: number, b: number, s: number): number {
  const bVirtual = s - a;
  const aVirtual = s - bVirtual;
  return (a - aVirtual) + (b - bVirtual);
}

// Double-double scratch (module-level so the hot paths allocate nothing).
let ddHigh = 0;
let ddLow = 0;

/** Sets (ddHigh, ddLow) to the pieces' total as a double-double, smallest grid first. */
function piecesToDoubleDouble(pieces: Float64Array, base: number): void {
  let high = pieces[base + LEVELS - 1];
  let low = 0;
  for (let level = LEVELS - 2; level >= 0; level--) {
    const s = high + pieces[base + level];
    low += sumError(high, pieces[base + level], s);
    high = s;
  }
  const s = high + low;
  ddLow = low - (s - high);
  ddHigh = s;
}

/**
 * Sample variance (divisor n − 1) from exact Σw and Σw² pieces: (n·Σw² − (Σw)²) / (n(n − 1)),
 * the numerator in double-double. Exactly 0 when min = max; NaN when n < 2.
 */
function varianceFromPieces(
  count: number,
  sumPieces: Float64Array,
  sumBase: number,
  squarePieces: Float64Array,
  squareBase: number,
  minimum: number,
  maximum: number,
): number {
  if (count < 2) return Number.NaN;
  if (minimum === maximum) return 0;
  piecesToDoubleDouble(sumPieces, sumBase);
  const sumHigh = ddHigh;
  const sumLow = ddLow;
  piecesToDoubleDouble(squarePieces, squareBase);
  const squareHigh = ddHigh;
  const squareLow = ddLow;
  // n·Σw² as double-double.
  const scaledHigh = count * squareHigh;
  const scaledLow = productError(count, squareHigh, scaledHigh) + count * squareLow;
  // (Σw)² as double-double.
  const squaredHigh = sumHigh * sumHigh;
  const squaredLow = productError(sumHigh, sumHigh, squaredHigh) + 2 * sumHigh * sumLow;
  const differenceHigh = scaledHigh - squaredHigh;
  const differenceLow = sumError(scaledHigh, -squaredHigh, differenceHigh) + (scaledLow - squaredLow);
  const numerator = differenceHigh + differenceLow;
  return Math.max(0, numerator) / (count * (count - 1));
}
