import { RangeCancelledError } from '../scale/errors.js';
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
 * failure that the fan-out retries once. Aborting `signal` aborts the fetch: its connection
 * closes, and the service stops the range at its next chunk of draws (README "Scaling out").
 */
export function remoteExecutor(baseUrl: string, token: string | undefined, fetchImpl: typeof fetch = fetch): RangeExecutor {
  const url = baseUrl.replace(/\/+$/, '') + RANGE_ROUTE;
  return async (request, { signal }) => {
    const headers: Record<string, string> = { 'content-type': 'application/json', accept: PARTIAL_MEDIA_TYPE };
    if (token) headers.authorization = `Bearer ${token}`;
    return readPartialResponse(await fetchImpl(url, { method: 'POST', headers, body: JSON.stringify(request), signal }), url);
  };
}

export interface RemoteRunOptions {
  readonly fetchImpl?: typeof fetch;
  /** Aborting it stops every range (their fetches are aborted); the run fails with RangeCancelledError. */
  readonly signal?: AbortSignal;
  /** Ctrl-C (SIGINT) aborts the run the same way while it lies in progress; a second Ctrl-C exits at once. */
  readonly interruptible?: boolean;
}

/**
 * Sends `shards` ranges to a deployed service and merges the partials here: the same fan-out and
 * merge as the Worker's Durable Object shards. Each range is its own request with its own CPU
 * allowance, so the work limit for the whole run is the service's single-request limit × shards
 * (each range is still checked by the service against its own limit). When one range fails for
 * good, or the run is aborted, the other ranges' fetches are aborted at once.
 */
export function remoteRunner(baseUrl: string, shards: number, token: string | undefined, options: RemoteRunOptions = {}): DrawRunner {
  const interrupt = new AbortController();
  const signal = options.signal ? AbortSignal.any([options.signal, interrupt.signal]) : interrupt.signal;
  const inner = fanOutRunner({ parts: shards, execute: remoteExecutor(baseUrl, token, options.fetchImpl), unit: 'shard', workShares: shardedWorkShares(shards), signal });
  if (!options.interruptible) return inner;
  const onInterrupt = (): void => {
    // Without this handler Node would exit at once; the service would still see the connections
    // close, but the user would get no word of what happened to the ranges.
    if (interrupt.signal.aborted) process.exit(130);
    interrupt.abort(new RangeCancelledError('interrupted (Ctrl-C)'));
  };
  return {
    get record() {
      return inner.record;
    },
    workShares: inner.workShares,
    async run(plan, proposal, onProgress) {
      process.on('SIGINT', onInterrupt);
      try {
        return await inner.run(plan, proposal, onProgress);
      } finally {
        process.off('SIGINT', onInterrupt);
      }
    },
  };
}
