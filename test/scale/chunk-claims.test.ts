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

  it('cuts the draws into contiguous chunks, at most one per draw', () => {
    const chunks = laneChunks(100, 2, 16);
    expect(chunks).toHaveLength(32);
    expect(chunks[0].start).toBe(0);
    expect(chunks.at(-1)?.end).toBe(100);
    for (let k = 1; k < chunks.length; k++) expect(chunks[k].start).toBe(chunks[k - 1].end);
    expect(laneChunks(5, 4, 16)).toHaveLength(5);
    expect(laneChunks(100, 2, 1)).toEqual([
      { index: 0, start: 0, end: 50 },
      { index: 1, start: 50, end: 100 },
    ]);
  });
});
