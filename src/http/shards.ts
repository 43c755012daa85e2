import { RangeCancelledError, ShardFailedError } from '../scale/errors.js';
import { z } from 'zod';
import { AUTO_SHARD_WORK, automaticShards, MAX_SHARDS, shardedWorkShares } from '../scale/limits.js';
import { readPartialResponse } from '../scale/partial-response.js';
import { describeRange } from '../scale/ranges.js';
import { computeRange, RangeProposalError, RangeRequestSchema, type RangeComputeOptions } from '../scale/range-job.js';
import { fanOutRunner, interruptibleRunner, type RangeExecutor } from '../scale/runner.js';
import { PARTIAL_MEDIA_TYPE } from '../scale/wire.js';
import { problem, problemsFromZod, statusFor } from '../schema/problems.js';
import { classifyError } from '../stress/errors.js';
import type { RunOptions } from '../stress/run.js';
import { readJsonBody } from './body.js';
import { PROBLEM_TITLES, problemResponse, summarise, type ProblemStatus } from './problem.js';
import type { RouteDefinition } from './route.js';

/**
 * Scale-out over HTTP (README "Scaling out"):
 * - POST /v1/stress/range computes one range of a request's draws and answers the binary partial
 *   result (application/vnd.wobble.partial); the CLI's --remote fan-out calls it, and each
 *   Durable Object shard answers the same request.
 * - POST /v1/stress?shards=N fans the draws out to N Durable Objects (one thread and one CPU
 *   allowance each), merges the partials and reports; above AUTO_SHARD_WORK it shards by itself.
 */

/** Name of the Durable Object namespace binding in wrangler.toml. */
export const SHARD_BINDING = 'STRESS_SHARD';

/** The parts of the Workers Durable Object API used here (structural, so Node tests can pass a stand-in). */
export interface ShardStub {
  fetch(input: string, init?: RequestInit): Promise<Response>;
}
export interface ShardNamespace {
  newUniqueId(): unknown;
  get(id: never): ShardStub;
}

function shardNamespace(env: unknown): ShardNamespace | undefined {
  if (!env || typeof env !== 'object') return undefined;
  const ns = (env as Record<string, unknown>)[SHARD_BINDING];
  return ns && typeof ns === 'object' && 'newUniqueId' in ns && 'get' in ns ? (ns as ShardNamespace) : undefined;
}

/** A problem with the shards query itself (answered before any work). */
export class ShardRequestError extends Error {
  constructor(
    readonly status: 400 | 501,
    message: string,
  ) {
    super(message);
    this.name = 'ShardRequestError';
  }
}

/** Lets other events run between chunks of draws: a client's disconnect, a shard's cancel message. */
export const yieldToEvents = (): Promise<void> => new Promise<void>((resolve) => setTimeout(resolve, 0));

export interface RangeResponseOptions extends RangeComputeOptions {
  /** Told the range [start, end) once the body is valid (a shard object's status). */
  readonly onRange?: (start: number, end: number) => void;
}

/**
 * Computes one range here and answers its partial, or problem+json (400/413/422; 409 when cancelled).
 *
 * The draws run in chunks (about a fifth of a second each, src/scale/range-job.ts) with a pause
 * between them, and the range stops at the next pause once `request.signal` aborts — the client
 * went away (the `enable_request_signal` compatibility flag in wrangler.toml; a cancelled
 * subrequest to a Durable Object aborts it too) — or `options.cancelled` says so. Without the
 * pauses the runtime could not deliver the disconnect: one synchronous run would go to its end.
 * A cancelled range is logged (draws done, why) for the operator; its 409 usually reaches no one.
 */
export async function rangeResponse(request: Request, options: RangeResponseOptions = {}): Promise<Response> {
  const body = await readJsonBody(request);
  if (!body.ok) return problemResponse(body.status, body.detail, body.errors ? { errors: body.errors } : {});
  const parsed = RangeRequestSchema.safeParse(body.value);
  if (!parsed.success) {
    const problems = problemsFromZod(parsed.error.issues);
    return problemResponse(400, summarise(problems), { errors: problems });
  }
  const clientGone = (): boolean => request.signal?.aborted === true;
  options.onRange?.(parsed.data.start, parsed.data.end);
  try {
    const { onRange: _onRange, ...computeOptions } = options;
    const bytes = await computeRange(parsed.data, {
      ...computeOptions,
      pause: options.pause ?? yieldToEvents,
      cancelled: () => clientGone() || options.cancelled?.() === true,
    });
    return new Response(bytes as Uint8Array<ArrayBuffer>, { headers: { 'content-type': PARTIAL_MEDIA_TYPE, 'content-length': String(bytes.byteLength) } });
  } catch (e) {
    if (e instanceof RangeProposalError) {
      const problems = e.problems.map((p) => ({ ...p, path: p.path ? `proposal.${p.path}` : 'proposal', pointer: `/proposal${p.pointer}` }));
      return problemResponse(statusFor(problems), summarise(problems), { errors: problems });
    }
    if (e instanceof RangeCancelledError) {
      const why = clientGone() ? 'its caller went away' : 'the coordinating request stopped it';
      const { start, end } = parsed.data;
      console.info(`wobble range: ${describeRange({ start, end })} ${e.message} (${why})`);
      return problemResponse(409, `${e.message} (${why})`);
    }
    const known = classifyError(e);
    if (!known) throw e;
    return problemResponse(known.status, known.detail);
  }
}

/**
 * POST /v1/stress/range: one range of a request's draws, computed here; the answer is the binary
 * partial result. Protected like the other /v1 POSTs (token, rate limit, body limits).
 */
export const stressRangeRoute: RouteDefinition = {
  method: 'post',
  path: '/v1/stress/range',
  operationId: 'stressRange',
  summary: 'Compute one range of a stress request’s draws and answer its partial result',
  description:
    'Body: `{proposal, draws, seed, start, end}` — the proposal, the whole request’s draws and seed, and the range [start, end) with 0 ≤ start < end ≤ draws. Answers the draws’ accumulated slots in the versioned binary form `application/vnd.wobble.partial`, for a caller that fans ranges out and merges them into the same report as one run (the CLI’s `--remote URL --shards N`; README "Scaling out"). Each range is held to one request’s work for its share of the draws. The draws run in chunks; when the caller goes away (closes the connection or aborts), the range stops at its next chunk (409 when anyone still listens).',
  tag: 'report',
  protected: true,
  cache: 'noStore',
  success: { description: 'The partial result of the range (binary; see README "Scaling out").', content: { [PARTIAL_MEDIA_TYPE]: { text: 'Binary partial result: magic "WBLP", version, JSON header, little-endian doubles.' } } },
  problems: [400, 409, 413, 422],
  handle: (c, config) => rangeResponse(c.req.raw, { limits: { maxWork: config.maxWork } }),
};

/**
 * Computes each range in a new Durable Object (a retry gets a new object). When the request stops
 * (its client went away, or another shard failed for good) the object hears it twice over: its
 * /range subrequest is cancelled, which aborts that request's signal inside the object, and a
 * cancel message is sent in case the runtime lets the subrequest run on. Either way the object
 * stops at its next chunk of draws.
 */
export function durableObjectExecutor(namespace: ShardNamespace): RangeExecutor {
  return async (request, { range, attempt, signal }) => {
    const stub = namespace.get(namespace.newUniqueId() as never);
    const cancel = (): void => {
      // The object checks for this between chunks of draws; the answer does not matter.
      stub.fetch('https://shard/cancel', { method: 'POST' }).catch(() => undefined);
    };
    signal.addEventListener('abort', cancel, { once: true });
    try {
      const response = await stub.fetch('https://shard/range', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(request), signal });
      if (signal.aborted) throw new RangeCancelledError();
      return await readPartialResponse(response, `shard ${range.index} (attempt ${attempt})`);
    } finally {
      signal.removeEventListener('abort', cancel);
    }
  };
}

/**
 * Run options for POST /v1/stress: sharded over Durable Objects when ?shards=N is given (1..MAX_SHARDS)
 * or, with the binding configured, automatically above AUTO_SHARD_WORK. Throws ShardRequestError
 * for a bad query or a missing binding.
 */
export function shardRunOptions(request: Request, env: unknown): Pick<RunOptions, 'drawRunner'> {
  const query = new URL(request.url).searchParams.get('shards');
  const namespace = shardNamespace(env);
  // Unsharded, the draws run here in chunks and stop once the client has gone away.
  if (query === null && !namespace) return { drawRunner: interruptibleRunner(request.signal, yieldToEvents) };
  let shards: number | undefined;
  if (query !== null) {
    shards = Number(query);
    if (!/^\d+$/.test(query) || shards < 1 || shards > MAX_SHARDS) throw new ShardRequestError(400, `shards must be an integer in 1..${MAX_SHARDS}, got "${query}"`);
    if (!namespace) throw new ShardRequestError(501, `sharding needs the ${SHARD_BINDING} Durable Object binding (see wrangler.toml and README "Scaling out")`);
  }
  const ns = namespace as ShardNamespace;
  return {
    drawRunner: fanOutRunner({
      parts: shards ?? ((plan) => (automaticShards(plan.workUnits, plan.draws) > 1 ? automaticShards(plan.workUnits, plan.draws) : 'here')),
      execute: durableObjectExecutor(ns),
      unit: 'shard',
      workShares: shardedWorkShares(shards ?? MAX_SHARDS),
      signal: request.signal,
      pause: yieldToEvents,
    }),
  };
}

/** problem+json for the scale-out failures of a stress request, or undefined for anything else. */
export function shardProblem(e: unknown): Response | undefined {
  if (e instanceof ShardRequestError) return problemResponse(e.status, e.message, e.status === 400 ? { errors: [problem(['shards'], e.message)] } : {});
  if (e instanceof ShardFailedError) {
    const status: ProblemStatus = e.status in PROBLEM_TITLES ? (e.status as ProblemStatus) : 502;
    return problemResponse(status, e.message);
  }
  if (e instanceof RangeCancelledError) {
    // The operator's trace of a request that stopped early (its 409 usually reaches no one).
    console.info(`wobble stress: ${e.message} (its caller went away)`);
    return problemResponse(409, e.message);
  }
  return undefined;
}

/** The `?shards` query of POST /v1/stress, for its OpenAPI description. */
export const SHARDS_QUERY = z.object({
  shards: z
    .string()
    .regex(/^\d+$/)
    .optional()
    .describe(
      `Compute the draws in N Durable Objects (1..${MAX_SHARDS}) and merge them: the same report, with meta.shards = N. Without it the service shards by itself above an estimated ${AUTO_SHARD_WORK.toExponential(0)} units of work when the STRESS_SHARD binding is configured; 501 when asked for without it.`,
    ),
});
