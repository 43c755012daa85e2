import { rangeResponse } from './http/shards.js';
import { problemResponse } from './http/problem.js';
import { readConfig, type ServiceBindings } from './http/config.js';
import type { WorkLimits } from './stress/engine.js';

/** What a shard object is doing, answered by GET https://shard/status (operators, tests). */
export interface ShardStatus {
  readonly state: 'idle' | 'running' | 'finished' | 'cancelled' | 'failed';
  /** The range [start, end) of the request's draws, once one has arrived. */
  readonly start?: number;
  readonly end?: number;
  /** Draws of the range finished so far (when cancelled: before it stopped). */
  readonly done: number;
  /** HTTP status of the range's answer, once answered. */
  readonly status?: number;
}

/**
 * A Durable Object that computes one range of a stress request's draws (README "Scaling out").
 * Each object runs on its own thread with its own CPU allowance, so a request fanned out to N
 * objects computes N ranges at once. It keeps no storage: a retry or a later request uses a new id.
 *
 *   POST https://shard/range   same body and answer as POST /v1/stress/range
 *   POST https://shard/cancel  stops a running range at its next chunk of draws
 *   GET  https://shard/status  what the object is doing (ShardStatus)
 *
 * The draws run in chunks with a pause between them, so a cancel message — or the caller
 * cancelling its /range subrequest, which aborts that request's signal — is heard while computing.
 */
export class StressShard {
  private cancelled = false;
  private current: ShardStatus = { state: 'idle', done: 0 };
  private readonly limits: WorkLimits;

  constructor(_state: unknown, env: ServiceBindings | undefined) {
    // The deployment's lowered work limit (WOBBLE_MAX_WORK) holds in every shard too.
    this.limits = { maxWork: readConfig(env).maxWork };
  }

  async fetch(request: Request): Promise<Response> {
    const { pathname } = new URL(request.url);
    if (request.method === 'POST' && pathname === '/cancel') {
      this.cancelled = true;
      return new Response(null, { status: 204 });
    }
    if (request.method === 'GET' && pathname === '/status') return Response.json(this.current, { headers: { 'cache-control': 'no-store' } });
    if (request.method === 'POST' && pathname === '/range') {
      this.cancelled = false;
      this.current = { state: 'running', done: 0 };
      let range: { start?: number; end?: number } = {};
      const response = await rangeResponse(request, {
        limits: this.limits,
        cancelled: () => this.cancelled,
        onProgress: (done) => {
          this.current = { ...range, state: 'running', done };
        },
        onRange: (start, end) => {
          range = { start, end };
          this.current = { ...range, state: 'running', done: 0 };
        },
      });
      const state = response.ok ? 'finished' : response.status === 409 ? 'cancelled' : 'failed';
      const done = response.ok && range.end !== undefined && range.start !== undefined ? range.end - range.start : this.current.done;
      this.current = { ...range, state, done, status: response.status };
      return response;
    }
    return problemResponse(404, `no shard route for ${request.method} ${pathname}`);
  }
}
