import { describe, expect, it } from 'vitest';
import { ChunkClaims, laneChunks } from '../../src/scale/chunk-claims.js';

describe('chunk claims', () => {
  it('hands out every chunk exactly once, in order, then nothing', () => {
    const claims = ChunkClaims.shared(5);
    const a = new ChunkClaims(claims.buffer, 5); // another thread's view of the same buffer
    const got = [claims.claim(), a.claim(), a.claim(), claims.claim(), a.claim(), claims.claim(), a.claim()];
    expect(got).toEqual([0, 1, 2, 3, 4, undefined, undefined]);
  });

  it('hands out nothing once stopped (seen through every view of the buffer)', () => {
    const claims = ChunkClaims.shared(10);
    const other = new ChunkClaims(claims.buffer, 10);
    expect(other.claim()).toBe(0);
    claims.stop();
    expect(other.stopped).toBe(true);
    expect(other.claim()).toBeUndefined();
  });

  it('cuts the draws into contiguous chunks, largest first (guided self-scheduling), never below the finest', () => {
    // Polychronopoulos & Kuck (1987): chunk k takes ⌈R_k / lanes⌉ of the R_k draws left.
    const chunks = laneChunks(100, 2, 16);
    expect(chunks.map((c) => c.end - c.start)).toEqual([50, 25, 13, 6, 4, 2]);
    expect(chunks[0].start).toBe(0);
    expect(chunks.at(-1)?.end).toBe(100);
    chunks.forEach((c, k) => expect(c.index).toBe(k));
    for (let k = 1; k < chunks.length; k++) expect(chunks[k].start).toBe(chunks[k - 1].end);
    const many = laneChunks(1500, 2);
    expect(many[0]).toEqual({ index: 0, start: 0, end: 750 });
    const sizes = many.map((c) => c.end - c.start);
    for (let k = 1; k < sizes.length; k++) expect(sizes[k]).toBeLessThanOrEqual(sizes[k - 1]);
    expect(Math.min(...sizes.slice(0, -1))).toBe(Math.ceil(1500 / (2 * 32)));
    expect(laneChunks(3, 4)).toHaveLength(3);
    // finest 1: one contiguous range per lane.
    expect(laneChunks(100, 2, 1)).toEqual([
      { index: 0, start: 0, end: 50 },
      { index: 1, start: 50, end: 100 },
    ]);
  });
});
