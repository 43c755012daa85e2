/**
 * Limits of a request whose draws are split into shards (ranges computed apart, each with its own
 * CPU allowance). See README "Scaling out".
 */

/** Most shards one request may ask for (subrequests and merge overhead stay small). */
export const MAX_SHARDS = 32;

/**
 * Above this estimated work a stress request is sharded automatically when the Durable Object
 * binding is configured: about 5 s of CPU on the reference machine (~1 ns per work unit,
 * src/schema/limits.ts), the point where a caller starts to wait.
 */
export const AUTO_SHARD_WORK = 5e9;

/** Shards chosen automatically for `workUnits`: one per AUTO_SHARD_WORK, at most MAX_SHARDS and the draws. */
export function automaticShards(workUnits: number, draws: number): number {
  if (workUnits <= AUTO_SHARD_WORK) return 1;
  return Math.max(1, Math.min(MAX_SHARDS, draws, Math.ceil(workUnits / AUTO_SHARD_WORK)));
}

/**
 * A request split into `shards` may do `shards` times the single-request work: each range is
 * checked again where it runs (rangeWorkShares), so no shard does more than one request's work.
 * The memory limit does NOT scale: the merge holds every draw's slots in one isolate (128 MB).
 */
export function shardedWorkShares(shards: number): number {
  return shards;
}
