import type { DrawRange } from './ranges.js';
import { describeRange } from './ranges.js';

/** A partial result that cannot be merged: wrong version, another request's data, wrong shape. */
export class PartialInvalidError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'PartialInvalidError';
  }
}

/** A range computation stopped because the request was cancelled (not a failure to retry). */
export class RangeCancelledError extends Error {
  constructor(message = 'the range computation was cancelled') {
    super(message);
    this.name = 'RangeCancelledError';
  }
}

/**
 * A range was refused for a reason that a retry cannot change (the service answered 4xx: over a
 * limit, unauthorised, invalid). `status` is the refusal's HTTP status.
 */
export class RangeRefusedError extends Error {
  constructor(
    readonly status: number,
    message: string,
  ) {
    super(message);
    this.name = 'RangeRefusedError';
  }
}

/**
 * A shard (or thread) failed on its first try and on its retry, or was refused: the request fails
 * as a whole (a report from part of the draws is never produced). Names the shard and its draws.
 */
export class ShardFailedError extends Error {
  constructor(
    readonly shard: DrawRange,
    readonly attempts: number,
    readonly reason: string,
    /** HTTP status to answer with: the refusal's own 4xx, else 502 (an upstream failed). */
    readonly status: number,
    /** What the range is called: a shard, a thread's range, or a chunk claimed by worker threads. */
    readonly unit: 'shard' | 'thread' | 'chunk' = 'shard',
  ) {
    super(`${unit} ${shard.index} (${describeRange(shard)}) failed${attempts > 1 ? ` on ${attempts} attempts` : ''}: ${reason}`);
    this.name = 'ShardFailedError';
  }
}
