import { RangeRefusedError } from '../scale/errors.js';
import { fanOutRunner, type RangeExecutor } from '../scale/runner.js';
import { PARTIAL_MEDIA_TYPE } from '../scale/wire.js';
import { shardedWorkLimit } from '../scale/limits.js';
import type { DrawRunner } from '../stress/run.js';

/** The route of a deployed service that computes one range (src/http/shards.ts). */
export const RANGE_ROUTE = '/v1/stress/range';

/** A short reason from a problem+json (or any) error answer. */
async function answerDetail(response: Response): Promise<string> {
  const text = await response.text().catch(() => '');
  try {
    const problem = JSON.parse(text) as { detail?: unknown };
    if (typeof problem.detail === 'string') return problem.detail;
  } catch {
    // not JSON: fall through to the raw text
  }
  return text.slice(0, 300) || response.statusText;
}

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
    const response = await fetchImpl(url, { method: 'POST', headers, body: JSON.stringify(request), signal });
    if (response.ok && (response.headers.get('content-type') ?? '').startsWith(PARTIAL_MEDIA_TYPE)) return new Uint8Array(await response.arrayBuffer());
    const detail = response.ok ? `expected ${PARTIAL_MEDIA_TYPE}, got ${response.headers.get('content-type')}` : await answerDetail(response);
    const message = `${url} answered ${response.status}: ${detail}`;
    if (response.status >= 400 && response.status < 500 && response.status !== 408 && response.status !== 429) throw new RangeRefusedError(response.status, message);
    throw new Error(message);
  };
}

/**
 * Sends `shards` ranges to a deployed service and merges the partials here: the same fan-out and
 * merge as the Worker's Durable Object shards. Each range is its own request with its own CPU
 * allowance, so the work limit for the whole run is the service's single-request limit × shards
 * (each range is still checked by the service against its own limit).
 */
export function remoteRunner(baseUrl: string, shards: number, token: string | undefined, fetchImpl?: typeof fetch): DrawRunner {
  return fanOutRunner({ parts: shards, execute: remoteExecutor(baseUrl, token, fetchImpl), unit: 'shard', workLimit: shardedWorkLimit(shards) });
}
