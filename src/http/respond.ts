import { problem, statusFor, type Problem } from '../schema/problems.js';
import { classifyError } from '../stress/errors.js';
import type { BodyResult } from './body.js';
import { problemResponse, summarise } from './problem.js';
import { shardProblem } from './shards.js';

/** Helpers shared by the route handlers: problems from bodies and validation, the core's typed failures, ETags. */

export function bodyProblem(body: Extract<BodyResult, { ok: false }>): Response {
  return problemResponse(body.status, body.detail, { errors: body.errors, headers: body.headers });
}

export function invalid(problems: readonly Problem[]): Response {
  return problemResponse(statusFor(problems), summarise(problems), { errors: problems });
}

/** Runs the core; typed failures become 413/422 problem+json, anything else propagates to onError (500, a bug). */
export async function runCore(run: () => Promise<Response>): Promise<Response> {
  try {
    return await run();
  } catch (e) {
    const sharding = shardProblem(e);
    if (sharding) return sharding;
    const known = classifyError(e);
    if (!known) throw e;
    return problemResponse(known.status, known.detail, known.path ? { errors: [problem(known.path, known.detail, known.status === 413 ? 'limit' : 'unsolvable')] } : {});
  }
}

export function prefixProblem(p: Problem, prefix: string): Problem {
  return { ...p, path: p.path ? `${prefix}.${p.path}` : prefix, pointer: `/${prefix}${p.pointer}` };
}

/** Wall-clock milliseconds for meta.elapsedMs only (never used to bound work). */
export const clock = (): number => Date.now();

const etags = new Map<string, string>();

/** A strong ETag: the first 128 bits of the body's SHA-256, computed once per body per isolate. */
async function etagOf(body: string): Promise<string> {
  const known = etags.get(body);
  if (known) return known;
  const digest = new Uint8Array(await crypto.subtle.digest('SHA-256', new TextEncoder().encode(body)));
  let hex = '';
  for (let i = 0; i < 16; i++) hex += digest[i].toString(16).padStart(2, '0');
  const tag = `"${hex}"`;
  if (etags.size < 64) etags.set(body, tag);
  return tag;
}

/** Does If-None-Match (RFC 9110 §13.1.2, weak comparison) name this tag? */
function matches(ifNoneMatch: string | null, tag: string): boolean {
  if (ifNoneMatch === null) return false;
  if (ifNoneMatch.trim() === '*') return true;
  return ifNoneMatch.split(',').some((candidate) => candidate.trim().replace(/^W\//, '') === tag);
}

/** A body that only changes with a release: sent with an ETag, or 304 when the caller already has it. */
export async function withEtag(request: Request, body: string, contentType: string): Promise<Response> {
  const tag = await etagOf(body);
  if (matches(request.headers.get('if-none-match'), tag)) return new Response(null, { status: 304, headers: { etag: tag } });
  return new Response(body, { status: 200, headers: { 'content-type': contentType, etag: tag } });
}
