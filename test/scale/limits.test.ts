import { describe, expect, it } from 'vitest';
import { AUTO_SHARD_WORK, automaticShards, MAX_SHARDS, shardedWorkShares } from '../../src/scale/limits.js';
import { rangeWorkShares } from '../../src/scale/range-job.js';
import { LIMITS } from '../../src/schema/limits.js';
import { checkLimits, LimitError } from '../../src/stress/engine.js';
import { factorCase } from '../bench/scale-problems.js';
import { valid } from './helpers.js';

describe('limits of a sharded request', () => {
  // 2000 assets, 8 factors, one method at 1000 draws: about 2.3e10 units, over one request's 2e10.
  const big = valid(factorCase(2000, 8, 1000)).proposal;
  const work = (shares: number) => checkLimits('stress', big, 1000, { workShares: shares });

  it('scales the work limit with the shards, and holds each range to one request’s share', () => {
    expect(() => work(1)).toThrow(LimitError);
    const units = work(shardedWorkShares(2));
    expect(units).toBeGreaterThan(LIMITS.maxWorkUnits);
    // A range of 500 of the 1000 draws carries half the work: allowed; all 1000 in one range: refused.
    expect(() => work(rangeWorkShares({ draws: 1000, start: 500, end: 1000 }))).not.toThrow();
    expect(() => work(rangeWorkShares({ draws: 1000, start: 0, end: 1000 }))).toThrow(/maxWorkUnits/);
  });

  it('does not scale the memory limit: the merge holds every draw in one isolate', () => {
    const tooMany = valid(factorCase(2000, 8, 2000)).proposal;
    expect(() => checkLimits('stress', tooMany, 2000, { workShares: 32 })).toThrow(/maxMemoryBytes/);
  });

  it('shards automatically one per AUTO_SHARD_WORK, at most MAX_SHARDS and the draws', () => {
    expect(automaticShards(AUTO_SHARD_WORK, 500)).toBe(1);
    expect(automaticShards(AUTO_SHARD_WORK * 2.5, 500)).toBe(3);
    expect(automaticShards(AUTO_SHARD_WORK * 1000, 500)).toBe(MAX_SHARDS);
    expect(automaticShards(AUTO_SHARD_WORK * 1000, 5)).toBe(5);
  });
});
