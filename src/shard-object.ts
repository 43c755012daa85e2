import { rangeResponse } from './http/shards.js';
import { problemResponse } from './http/problem.js';
import { readConfig, type ServiceBindings } from './http/config.js';
import type { WorkLimits } from './stress/engine.js';

/**
 * A Durable Object that computes one range of a stress request's draws (README "Scaling out").
 * Each object runs on its own thread with its own CPU allowance, so a request fanned out to N
 * objects computes N ranges at once. It keeps no storage: a retry or a later request uses a new id.
 *
 *   POST https://shard/range   same body and answer as POST /v1/stress/range
 *   POST https://shard/cancel  stops a running range at its next chunk of draws
 *
 * The draws run in chunks with a pause between them, so a cancel message is heard while computing.
 */
export class StressShard {
  private cancelled = false;
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
    if (request.method === 'POST' && pathname === '/range') {
      this.cancelled = false;
      return rangeResponse(request, {
        limits: this.limits,
        pause: () => new Promise<void>((resolve) => setTimeout(resolve, 0)),
        cancelled: () => this.cancelled,
      });
    }
    return problemResponse(404, `no shard route for ${request.method} ${pathname}`);
  }
}
