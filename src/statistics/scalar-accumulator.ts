import {
  createQuantileErrorWorkspace,
  quantileStdErrs,
  quantileWidthStdErr,
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

/** Copies source's recorded slots into target's status; throws if a slot is recorded in both. */
export function mergeDrawStatus(target: Uint8Array, source: Uint8Array): void {
  if (target.length !== source.length) throw new RangeError('cannot merge accumulators of different sizes');
  for (let b = 0; b < source.length; b++) {
    if (source[b] !== DRAW_NOT_RECORDED && target[b] !== DRAW_NOT_RECORDED) {
      throw new Error(`draw ${b} recorded in both accumulators (merge needs disjoint draw ranges)`);
    }
  }
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
  /** Monte Carlo standard errors of the percentiles (order-statistic interval). */
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
  readonly status: number[];
  readonly values: number[];
}

const SUMMARY_PROBABILITIES = [0.05, 0.5, 0.95];

/**
 * One scalar per draw (turnover, volatility, certainty-equivalent loss, …) stored in slot
 * `drawIndex`; a non-finite value (NaN) marks a failed draw, excluded from every statistic and
 * counted. Memory: B doubles + B bytes.
 */
export class ScalarAccumulator {
  readonly draws: number;
  private readonly values: Float64Array;
  private readonly status: Uint8Array;

  constructor(draws: number) {
    checkDrawCount(draws);
    this.draws = draws;
    this.values = new Float64Array(draws).fill(Number.NaN);
    this.status = new Uint8Array(draws);
  }

  /** Stores draw `drawIndex`'s value; NaN or ±∞ records a failed draw. Each slot once only. */
  record(drawIndex: number, value: number): void {
    checkDrawIndex(drawIndex, this.draws);
    if (this.status[drawIndex] !== DRAW_NOT_RECORDED) throw new Error(`draw ${drawIndex} already recorded`);
    if (Number.isFinite(value)) {
      this.values[drawIndex] = value;
      this.status[drawIndex] = DRAW_SUCCEEDED;
    } else {
      this.status[drawIndex] = DRAW_FAILED;
    }
  }

  recordFailure(drawIndex: number): void {
    this.record(drawIndex, Number.NaN);
  }

  /** Adds another accumulator's slots (same draw count, disjoint recorded draws). */
  merge(other: ScalarAccumulator): void {
    if (other.draws !== this.draws) throw new RangeError('cannot merge accumulators of different draw counts');
    mergeDrawStatus(this.status, other.status);
    for (let b = 0; b < this.draws; b++) {
      if (other.status[b] !== DRAW_NOT_RECORDED) {
        this.status[b] = other.status[b];
        this.values[b] = other.values[b];
      }
    }
  }

  counts(): DrawCounts {
    return countDraws(this.status);
  }

  /** Read-only intent: the per-draw values (NaN where not successful), indexed by draw. */
  slots(): Float64Array {
    return this.values;
  }

  summarize(workspace: QuantileErrorWorkspace = createQuantileErrorWorkspace(this.draws)): ScalarSummary {
    const moments = stridedMoments(this.values, 0, 1, this.draws);
    const percentiles = new Float64Array(SUMMARY_PROBABILITIES.length);
    quantilesOfStrided(this.values, 0, 1, this.draws, SUMMARY_PROBABILITIES, workspace.sort, percentiles);
    const errors = new Float64Array(SUMMARY_PROBABILITIES.length);
    const quantileErrorMethod = quantileStdErrs(this.values, 0, 1, this.draws, SUMMARY_PROBABILITIES, errors, workspace);
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
      bandWidthStdErr: quantileWidthStdErr(this.values, 0, 1, this.draws, 0.05, 0.95, workspace),
      quantileErrorMethod,
    };
  }

  toState(): ScalarAccumulatorState {
    const values: number[] = new Array<number>(this.draws);
    for (let b = 0; b < this.draws; b++) values[b] = this.status[b] === DRAW_SUCCEEDED ? this.values[b] : 0;
    return { draws: this.draws, status: Array.from(this.status), values };
  }

  static fromState(state: ScalarAccumulatorState): ScalarAccumulator {
    const accumulator = new ScalarAccumulator(state.draws);
    if (state.status.length !== state.draws || state.values.length !== state.draws) {
      throw new RangeError('scalar accumulator state has the wrong length');
    }
    for (let b = 0; b < state.draws; b++) {
      if (state.status[b] === DRAW_SUCCEEDED) accumulator.record(b, state.values[b]);
      else if (state.status[b] === DRAW_FAILED) accumulator.recordFailure(b);
    }
    return accumulator;
  }
}
