import { splitDraws, type DrawRange } from './ranges.js';

/**
 * Chunks of one request's draws, claimed one at a time by the lanes that compute them (this thread
 * and worker threads). The claim counter lives in a shared buffer, so a worker thread claims its
 * next chunk itself, without waiting for the coordinating thread (busy computing chunks of its own).
 * Whoever is free takes the next chunk: lanes that start late or run slower (a thread still loading
 * modules, code not yet compiled, a core shared with another process) simply compute fewer chunks,
 * and all lanes finish within about one chunk of each other (dynamic self-scheduling; Polychronopoulos
 * & Kuck 1987, "Guided self-scheduling", IEEE Trans. Computers 36(12), discuss the chunk-size
 * trade-off). Which lane computes a chunk never changes the report: every draw depends only on the
 * seed and its index, and the merge is order-free.
 *
 * Layout of the shared Int32Array: [0] the next chunk to claim, [1] the stop flag.
 */
export class ChunkClaims {
  private readonly cells: Int32Array;

  constructor(
    /** A SharedArrayBuffer of at least 8 bytes when lanes run on several threads. */
    readonly buffer: ArrayBufferLike,
    readonly chunks: number,
  ) {
    if (buffer.byteLength < 8) throw new RangeError('the claim buffer needs 8 bytes');
    this.cells = new Int32Array(buffer, 0, 2);
  }

  /** Claims for `chunks` chunks in a SharedArrayBuffer (shareable with worker threads). */
  static shared(chunks: number): ChunkClaims {
    return new ChunkClaims(new SharedArrayBuffer(8), chunks);
  }

  /** The next unclaimed chunk, or undefined when none is left or the claims were stopped. */
  claim(): number | undefined {
    if (this.stopped) return undefined;
    const k = Atomics.add(this.cells, 0, 1);
    return k < this.chunks ? k : undefined;
  }

  /** No lane claims another chunk after this (cancellation). */
  stop(): void {
    Atomics.store(this.cells, 1, 1);
  }

  get stopped(): boolean {
    return Atomics.load(this.cells, 1) === 1;
  }
}

/**
 * Chunks per lane. More chunks balance better (lanes end within one chunk of each other, here
 * about 1/16 of a lane's share) but each costs one partial result (encode, transfer, check, merge;
 * about a millisecond for the 30-asset benchmark case, measured with `npm run bench:scale`).
 */
export const CHUNKS_PER_LANE = 16;

/** Contiguous chunks of the draws for `lanes` lanes: `chunksPerLane` per lane, at most one per draw. */
export function laneChunks(draws: number, lanes: number, chunksPerLane = CHUNKS_PER_LANE): DrawRange[] {
  return splitDraws(draws, Math.min(draws, Math.max(1, lanes * chunksPerLane)));
}
