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
 * Smallest chunk, as a fraction of a lane's even share of the draws: the last chunks are about
 * 1/32 of a lane's share, so lanes finish within about 3 % of a lane's time of each other.
 */
export const FINEST_CHUNK_PER_LANE = 32;

/**
 * Contiguous chunks of the draws for `lanes` lanes, largest first: chunk k holds ⌈R_k / lanes⌉ of
 * the R_k draws not yet in a chunk (guided self-scheduling, Polychronopoulos & Kuck 1987), but at
 * least ⌈draws / (lanes · finest)⌉. The first claims take big chunks (few partials to encode and
 * merge; a cold thread compiles its code on one long run), the last ones small chunks (lanes end
 * together). The sizes depend only on the draws and lanes, never on timing, so the chunks — and
 * the partials' ranges — are the same every run. `finest` 1 gives one contiguous range per lane.
 */
export function laneChunks(draws: number, lanes: number, finest = FINEST_CHUNK_PER_LANE): DrawRange[] {
  if (!Number.isInteger(draws) || draws < 1) throw new RangeError(`draws must be a positive integer, got ${draws}`);
  if (!Number.isInteger(lanes) || lanes < 1) throw new RangeError(`lanes must be a positive integer, got ${lanes}`);
  if (finest <= 1) return splitDraws(draws, Math.min(draws, lanes));
  const smallest = Math.max(1, Math.ceil(draws / (lanes * finest)));
  const chunks: DrawRange[] = [];
  for (let start = 0; start < draws; ) {
    const size = Math.min(draws - start, Math.max(smallest, Math.ceil((draws - start) / lanes)));
    chunks.push({ index: chunks.length, start, end: start + size });
    start += size;
  }
  return chunks;
}
