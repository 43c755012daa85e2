import { readPartialResponse } from '../scale/partial-response.js';
import { fanOutRunner, type RangeExecutor } from '../scale/runner.js';
import { PARTIAL_MEDIA_TYPE } from '../scale/wire.js';
import { shardedWorkShares } from '../scale/limits.js';
import type { DrawRunner } from '../stress/run.js';

/** The route of a deployed service that computes one range (src/http/shards.ts). */
export const RANGE_ROUTE = '/v1/stress/range';

/**
 * Computes a range on a deployed service (POST {url}/v1/stress/range, Bearer token when given).
 * 4xx answers other than 408/429 are refusals (a retry would get the same); anything else is a
 * failure that the fan-out retries once.
 */
export function remoteExecutor(baseUrl: string, token: string | undefined, fetchImpl: typeof fetch = fetch): RangeExecutor {
  const url = baseUrl.replace(/\/+$/, '') + RANGE_ROUTE;
  return async (request, { signal }) => {
    const headers: Record<string, string> = { 'content-type': 'application/json', accept: PARTIAL_MEDIA_TYPE };
    if (token) headers.authorization = `Bearer ${token}`;
    return readPartialResponse(await fetchImpl(url, { method: 'POST', headers, body: JSON.stringify(request), signal }), url);
  };
}

/**
 * Sends `shards` ranges to a deployed service and merges the partials here: the same fan-out and
 * merge as the Worker's Durable Object shards. Each range is its own request with its own CPU
 * allowance, so the work limit for the whole run is the service's single-request limit × shards
 * (each range is still checked by the service against its own limit).
 */
export function remoteRunner(baseUrl: string, shards: number, token: string | undefined, fetchImpl?: typeof fetch): DrawRunner {
  return fanOutRunner({ parts: shards, execute: remoteExecutor(baseUrl, token, fetchImpl), unit: 'shard', workShares: shardedWorkShares(shards) });
}
