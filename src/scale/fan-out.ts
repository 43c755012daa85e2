import type { StressAccumulators, StressPlan } from '../stress/engine.js';
import { RangeCancelledError, RangeRefusedError, ShardFailedError } from './errors.js';
import { PartialMerger } from './merge.js';
import type { DrawRange } from './ranges.js';

/**
 * Computes one range somewhere (a worker thread, a Durable Object, a remote service) and returns
 * its binary partial. `attempt` is 1 for the first try, 2 for the retry. Must stop promptly when
 * `signal` aborts. Throw RangeRefusedError for answers a retry cannot change.
 */
export type ComputeRangeBytes = (range: DrawRange, attempt: number, signal: AbortSignal, onProgress: (done: number) => void) => Promise<Uint8Array>;

export interface FanOutOptions {
  /** Aborting it (e.g. the client went away) stops every range still running. */
  readonly signal?: AbortSignal;
  /** Retries per range after a failure (default 1). Draws are deterministic, so a retry is exact. */
  readonly retries?: number;
  /** What a range is called in errors. */
  readonly unit?: 'shard' | 'thread';
  readonly onProgress?: (done: number, total: number) => void;
}

/**
 * Runs every range concurrently, merges each partial as it arrives (checked first, see
 * PartialMerger) and returns the merged accumulators — or throws: ShardFailedError naming the
 * first range that failed on its retry too (the others are stopped at once), or
 * RangeCancelledError when `signal` aborted. Never returns accumulators missing any draw.
 */
export async function fanOut(
  plan: StressPlan,
  inputDigest: string,
  ranges: readonly DrawRange[],
  compute: ComputeRangeBytes,
  options: FanOutOptions = {},
): Promise<StressAccumulators> {
  const merger = new PartialMerger(plan, inputDigest, ranges);
  const retries = options.retries ?? 1;
  const unit = options.unit ?? 'shard';
  const stop = new AbortController();
  const external = options.signal;
  const onExternalAbort = (): void => stop.abort(new RangeCancelledError('the request was cancelled'));
  if (external?.aborted) throw new RangeCancelledError('the request was cancelled');
  external?.addEventListener('abort', onExternalAbort, { once: true });

  const done = new Array<number>(ranges.length).fill(0);
  let doneTotal = 0;
  const progress = (k: number, d: number): void => {
    doneTotal += d - done[k];
    done[k] = d;
    options.onProgress?.(doneTotal, plan.draws);
  };

  let firstFailure: Error | undefined;
  const runRange = async (range: DrawRange): Promise<void> => {
    let lastReason = '';
    for (let attempt = 1; attempt <= 1 + retries; attempt++) {
      if (stop.signal.aborted) return;
      try {
        const bytes = await compute(range, attempt, stop.signal, (d) => progress(range.index, d));
        if (stop.signal.aborted) return;
        merger.add(range, bytes);
        progress(range.index, range.end - range.start);
        return;
      } catch (e) {
        if (stop.signal.aborted) return;
        progress(range.index, 0);
        if (e instanceof RangeRefusedError) throw new ShardFailedError(range, attempt, e.message, e.status, unit);
        lastReason = e instanceof Error ? e.message : String(e);
      }
    }
    throw new ShardFailedError(range, 1 + retries, lastReason, 502, unit);
  };

  await Promise.all(
    ranges.map((range) =>
      runRange(range).catch((e: unknown) => {
        // The first failure stops every other range; later ones are consequences.
        if (!firstFailure) {
          firstFailure = e instanceof Error ? e : new Error(String(e));
          stop.abort(firstFailure);
        }
      }),
    ),
  );
  external?.removeEventListener('abort', onExternalAbort);
  if (firstFailure) throw firstFailure;
  if (stop.signal.aborted) throw new RangeCancelledError('the request was cancelled');
  return merger.finish();
}
