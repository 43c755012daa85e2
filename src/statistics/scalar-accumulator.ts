import {
  createQuantileErrorWorkspace,
  sortedQuantileStdErrs,
  sortedQuantileWidthStdErr,
  stridedMoments,
  type QuantileErrorWorkspace,
} from './batch-means.js';
import { quantilesOfStrided } from './quantiles.js';

/**
 * Per-draw slot status shared by the slot-based accumulators. Each draw index is recorded at most
 * once; two accumulators over disjoint draw ranges merge slot by slot, so the result never
 * depends on the order draws were folded in or how they were split.
 */
export const DRAW_NOT_RECORDED = 0;
export const DRAW_SUCCEEDED = 1;
export const DRAW_FAILED = 2;

/** Throws unless 0 ≤ drawIndex < draws is an integer. */
export function checkDrawIndex(drawIndex: number, draws: number): void {
  if (!Number.isInteger(drawIndex) || drawIndex < 0 || drawIndex >= draws) {
    throw new RangeError(`draw index ${drawIndex} outside 0..${draws - 1}`);
  }
}

/** Throws unless draws is an integer in 1..2^25 (the exact-sum accumulators rely on ≤ 2^25). */
export function checkDrawCount(draws: number): void {
  if (!Number.isInteger(draws) || draws < 1 || draws > 2 ** 25) {
    throw new RangeError(`draw count must be an integer in 1..${2 ** 25}, got ${draws}`);
  }
}

/** Throws unless the asset count (width of a per-draw weight row) is a positive integer. */
export function checkAssetCount(assets: number): void {
  if (!Number.isInteger(assets) || assets < 1) throw new RangeError(`asset count must be a positive integer, got ${assets}`);
}

/**
 * Checks that source's recorded slots are free in target, source slot b lining up with target
 * slot `offset` + b (the two may hold different ranges of draws); throws if a slot is recorded in
 * both. Without an offset the two must be the same size.
 */
export function mergeDrawStatus(target: Uint8Array, source: Uint8Array, offset?: number): void {
  if (offset === undefined && target.length !== source.length) throw new RangeError('cannot merge accumulators of different sizes');
  const at = offset ?? 0;
  if (at < 0 || at + source.length > target.length) throw new RangeError('cannot merge: the source range lies outside the target range');
  for (let b = 0; b < source.length; b++) {
    if (source[b] !== DRAW_NOT_RECORDED && target[at + b] !== DRAW_NOT_RECORDED) {
      throw new Error(`draw ${b} recorded in both accumulators (merge needs disjoint draw ranges)`);
    }
  }
}

/**
 * The draws [start, end) an accumulator holds slots for, out of the request's `draws`. A range
 * computed apart (a thread, a shard) allocates end − start slots, not a whole run's B.
 */
export interface SlotRange {
  readonly start: number;
  readonly end: number;
}

/** Throws unless 0 ≤ start < end ≤ draws are integers; returns the range (whole request when omitted). */
/**
 * The slot of draw `drawIndex` in an accumulator holding draws firstDraw .. firstDraw + slotCount − 1
 * of a request of `draws` draws (shared by the scalar and weight accumulators).
 */
export function slotOfDraw(drawIndex: number, draws: number, firstDraw: number, slotCount: number): number {
  checkDrawIndex(drawIndex, draws);
  const slot = drawIndex - firstDraw;
  if (slot < 0 || slot >= slotCount) throw new RangeError(`draw index ${drawIndex} outside this accumulator's range ${firstDraw}..${firstDraw + slotCount - 1}`);
  return slot;
}

export function checkSlotRange(draws: number, range: SlotRange | undefined): SlotRange {
  if (!range) return { start: 0, end: draws };
  const { start, end } = range;
  if (!Number.isInteger(start) || !Number.isInteger(end) || start < 0 || end <= start || end > draws) {
    throw new RangeError(`slot range [${start}, ${end}) must satisfy 0 ≤ start < end ≤ ${draws}`);
  }
  return { start, end };
}

/** Counts of recorded, successful and failed draws in a status array. */
export interface DrawCounts {
  readonly recordedDraws: number;
  readonly successfulDraws: number;
  readonly failedDraws: number;
}

export function countDraws(status: Uint8Array): DrawCounts {
  let successfulDraws = 0;
  let failedDraws = 0;
  for (let b = 0; b < status.length; b++) {
    if (status[b] === DRAW_SUCCEEDED) successfulDraws++;
    else if (status[b] === DRAW_FAILED) failedDraws++;
  }
  return { recordedDraws: successfulDraws + failedDraws, successfulDraws, failedDraws };
}

/** Summary of one per-draw scalar over the successful draws. NaN where undefined (see fields). */
export interface ScalarSummary extends DrawCounts {
  readonly mean: number;
  /** sd / √n (NaN when fewer than 2 successful draws). */
  readonly stdErr: number;
  /** Sample sd, divisor n − 1. */
  readonly sd: number;
  readonly p05: number;
  readonly p50: number;
  readonly p95: number;
  /** Monte Carlo standard errors of the percentiles (exact bootstrap of the sample percentile). */
  readonly p05StdErr: number;
  readonly p50StdErr: number;
  readonly p95StdErr: number;
  /** Monte Carlo standard error of p95 − p05 (for band-width gate rules). */
  readonly bandWidthStdErr: number;
  readonly quantileErrorMethod: 'order-statistic';
}

/** JSON-safe state: values hold 0 in slots that did not succeed (status tells which). */
export interface ScalarAccumulatorState {
  readonly draws: number;
  /** First draw of the slots (0 when omitted: a whole run); status and values hold end − start entries. */
  readonly start?: number;
  readonly end?: number;
  readonly status: number[];
  readonly values: number[];
}

const SUMMARY_PROBABILITIES = [0.05, 0.5, 0.95];

/**
 * One scalar per draw (turnover, volatility, certainty-equivalent loss, …) stored in slot
 * `drawIndex`; a non-finite value (NaN) marks a failed draw, excluded from every statistic and
 * counted. Memory: one double and one byte per slot: B for a whole run, end − start for a range
 * [start, end) of the draws computed apart (slot of draw b at b − start).
 */
export class ScalarAccumulator {
  /** Draws of the whole request (B): draw indices are 0..B−1 whatever range is held. */
  readonly draws: number;
  /** First draw this accumulator holds a slot for. */
  readonly firstDraw: number;
  /** Slots held: draws firstDraw .. firstDraw + slotCount − 1. */
  readonly slotCount: number;
  private readonly values: Float64Array;
  private readonly status: Uint8Array;

  constructor(draws: number, range?: SlotRange) {
    checkDrawCount(draws);
    const { start, end } = checkSlotRange(draws, range);
    this.draws = draws;
    this.firstDraw = start;
    this.slotCount = end - start;
    this.values = new Float64Array(this.slotCount).fill(Number.NaN);
    this.status = new Uint8Array(this.slotCount);
  }

  /** True when the slots cover every draw of the request (summaries need that). */
  get whole(): boolean {
    return this.slotCount === this.draws;
  }

  private slotOf(drawIndex: number): number {
    return slotOfDraw(drawIndex, this.draws, this.firstDraw, this.slotCount);
  }

  /** Stores draw `drawIndex`'s value; NaN or ±∞ records a failed draw. Each slot once only. */
  record(drawIndex: number, value: number): void {
    const slot = this.slotOf(drawIndex);
    if (this.status[slot] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} already recorded`);
    if (Number.isFinite(value)) {
      this.values[slot] = value;
      this.status[slot] = DRAW_SUCCEEDED;
    } else {
      this.status[slot] = DRAW_FAILED;
    }
  }

  recordFailure(drawIndex: number): void {
    this.record(drawIndex, Number.NaN);
  }

  /** Adds another accumulator's slots (same request draw count, its range inside this one's, disjoint recorded draws). */
  merge(other: ScalarAccumulator): void {
    if (other.draws !== this.draws) throw new RangeError('cannot merge accumulators of different draw counts');
    const offset = other.firstDraw - this.firstDraw;
    mergeDrawStatus(this.status, other.status, offset);
    for (let b = 0; b < other.slotCount; b++) {
      if (other.status[b] !== DRAW_NOT_RECORDED) {
        this.status[offset + b] = other.status[b];
        this.values[offset + b] = other.values[b];
      }
    }
  }

  counts(): DrawCounts {
    return countDraws(this.status);
  }

  /** Read-only intent: the per-draw values (NaN where not successful), draw b in slot b − firstDraw (b for a whole run). */
  slots(): Float64Array {
    return this.values;
  }

  summarize(workspace: QuantileErrorWorkspace = createQuantileErrorWorkspace(this.draws)): ScalarSummary {
    if (!this.whole) throw new RangeError('summaries need every draw: merge the ranges first');
    const moments = stridedMoments(this.values, 0, 1, this.draws);
    const percentiles = new Float64Array(SUMMARY_PROBABILITIES.length);
    // One sort of the successful values serves the percentiles and all their errors.
    const m = quantilesOfStrided(this.values, 0, 1, this.draws, SUMMARY_PROBABILITIES, workspace.sort, percentiles);
    const errors = new Float64Array(SUMMARY_PROBABILITIES.length);
    sortedQuantileStdErrs(workspace.sort, m, SUMMARY_PROBABILITIES, errors);
    return {
      ...this.counts(),
      mean: moments.mean,
      stdErr: moments.stdErr,
      sd: moments.sd,
      p05: percentiles[0],
      p50: percentiles[1],
      p95: percentiles[2],
      p05StdErr: errors[0],
      p50StdErr: errors[1],
      p95StdErr: errors[2],
      bandWidthStdErr: sortedQuantileWidthStdErr(workspace.sort, m, 0.05, 0.95),
      quantileErrorMethod: 'order-statistic',
    };
  }

  toState(): ScalarAccumulatorState {
    const values: number[] = new Array<number>(this.slotCount);
    for (let b = 0; b < this.slotCount; b++) values[b] = this.status[b] === DRAW_SUCCEEDED ? this.values[b] : 0;
    const range = this.whole ? {} : { start: this.firstDraw, end: this.firstDraw + this.slotCount };
    return { draws: this.draws, ...range, status: Array.from(this.status), values };
  }

  static fromState(state: ScalarAccumulatorState): ScalarAccumulator {
    const start = state.start ?? 0;
    const accumulator = new ScalarAccumulator(state.draws, { start, end: state.end ?? state.draws });
    if (state.status.length !== accumulator.slotCount || state.values.length !== accumulator.slotCount) {
      throw new RangeError('scalar accumulator state has the wrong length');
    }
    for (let b = 0; b < accumulator.slotCount; b++) {
      if (state.status[b] === DRAW_SUCCEEDED) accumulator.record(start + b, state.values[b]);
      else if (state.status[b] === DRAW_FAILED) accumulator.recordFailure(start + b);
    }
    return accumulator;
  }
}
