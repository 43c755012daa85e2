import type { StressAccumulators, StressPlan } from '../stress/engine.js';
import { ChunkClaims } from './chunk-claims.js';
import { RangeCancelledError, ShardFailedError } from './errors.js';
import { PartialMerger } from './merge.js';
import type { DrawRange } from './ranges.js';

/** What a lane is given: the claims to draw chunks from and where to hand their partials. */
export interface LaneContext {
  readonly claims: ChunkClaims;
  readonly chunks: readonly DrawRange[];
  /** A finished chunk's binary partial: checked and merged at once. */
  deliver(index: number, bytes: Uint8Array): void;
  /** Draws finished so far in the chunk the lane is computing now. */
  progress(done: number): void;
  /** Aborts when the request is cancelled or the run has failed: the lane stops at once. */
  readonly signal: AbortSignal;
}

/**
 * Why a lane stopped early (it failed, or its thread died), or nothing when it ran out of chunks.
 * Chunks it claimed and never delivered are found missing and retried.
 */
export interface LaneEnd {
  readonly failure?: string;
}

/** One worker (this thread, a worker thread): claims chunks until none is left, delivering each. */
export type Lane = (context: LaneContext) => Promise<LaneEnd>;

export interface LaneRunOptions {
  readonly signal?: AbortSignal;
  readonly onProgress?: (done: number, total: number) => void;
}

/**
 * Computes every chunk of a request on `lanes` that claim chunks as they become free (see
 * ChunkClaims) and merges the partials as they arrive. A lane that fails stops; the chunks it
 * claimed but did not deliver are computed again by `retry` once every lane has ended (draws are
 * deterministic, so the retry is exact). A chunk whose retry fails too fails the request with
 * ShardFailedError naming the chunk and its draws — never a report from part of the draws. A
 * cancelled request (signal) stops every lane and throws RangeCancelledError.
 */
export async function runLanes(
  plan: StressPlan,
  inputDigest: string,
  chunks: readonly DrawRange[],
  lanes: readonly Lane[],
  retry: (chunk: DrawRange) => Promise<Uint8Array>,
  options: LaneRunOptions = {},
): Promise<StressAccumulators> {
  const merger = new PartialMerger(plan, inputDigest, chunks);
  const claims = ChunkClaims.shared(chunks.length);
  const stop = new AbortController();
  const external = options.signal;
  if (external?.aborted) throw new RangeCancelledError('the request was cancelled');
  const onExternalAbort = (): void => {
    claims.stop();
    stop.abort(new RangeCancelledError('the request was cancelled'));
  };
  external?.addEventListener('abort', onExternalAbort, { once: true });

  const merged = new Set<number>();
  const failures: string[] = [];
  let mergedDraws = 0;
  const inChunk = new Array<number>(lanes.length).fill(0);
  const report = (): void => {
    let total = mergedDraws;
    for (const d of inChunk) total += d;
    options.onProgress?.(total, plan.draws);
  };

  const contextOf = (lane: number): LaneContext => ({
    claims,
    chunks,
    signal: stop.signal,
    deliver(index, bytes) {
      const chunk = chunks[index];
      inChunk[lane] = 0;
      if (stop.signal.aborted || !chunk) return;
      try {
        merger.add(chunk, bytes);
        merged.add(index);
        mergedDraws += chunk.end - chunk.start;
      } catch (e) {
        // A partial that does not fit is left out; the chunk is found missing and computed again.
        failures.push(`chunk ${index}: ${e instanceof Error ? e.message : String(e)}`);
      }
      report();
    },
    progress(done) {
      inChunk[lane] = done;
      report();
    },
  });

  try {
    const ends = await Promise.all(
      lanes.map((lane, k) =>
        lane(contextOf(k)).catch((e: unknown): LaneEnd => ({ failure: e instanceof Error ? `${e.name}: ${e.message}` : String(e) })),
      ),
    );
    for (const end of ends) if (end.failure) failures.push(end.failure);
    if (stop.signal.aborted || external?.aborted) throw new RangeCancelledError('the request was cancelled');
    inChunk.fill(0);
    for (const chunk of chunks) {
      if (merged.has(chunk.index)) continue;
      if (external?.aborted) throw new RangeCancelledError('the request was cancelled');
      let bytes: Uint8Array;
      try {
        bytes = await retry(chunk);
        merger.add(chunk, bytes);
      } catch (e) {
        if (e instanceof RangeCancelledError) throw e;
        const reason = e instanceof Error ? e.message : String(e);
        throw new ShardFailedError(chunk, 2, failures.length > 0 ? `${failures[0]}; on its retry: ${reason}` : reason, 502, 'chunk');
      }
      merged.add(chunk.index);
      mergedDraws += chunk.end - chunk.start;
      report();
    }
    return merger.finish();
  } finally {
    external?.removeEventListener('abort', onExternalAbort);
    // Whatever happened, no lane keeps claiming.
    claims.stop();
    if (!stop.signal.aborted) stop.abort(new RangeCancelledError('the run ended'));
  }
}
