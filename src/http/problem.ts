import { z } from 'zod';
import type { Problem } from '../schema/problems.js';

/** RFC 9457 problem details, with the JSON path of every bad field. Documented in OpenAPI from this schema. */
export const ProblemDetailsSchema = z
  .looseObject({
    type: z.string().describe('URI naming the kind of problem.'),
    title: z.string().describe('Short summary of the kind of problem.'),
    status: z.int().min(400).max(599).describe('The HTTP status code.'),
    detail: z.string().describe('What went wrong with this request, in plain words.'),
    errors: z
      .array(
        z.strictObject({
          path: z.string().describe('Dotted path with indices, e.g. `inputs.covariance[2][1]`; empty for the whole body.'),
          pointer: z.string().describe('RFC 6901 JSON Pointer to the same place, e.g. `/inputs/covariance/2/1`.'),
          message: z.string().describe('What was expected and what was found.'),
          kind: z.enum(['limit', 'unsolvable']).optional().describe('`limit`: over a service limit; `unsolvable`: well formed but without an answer.'),
        }),
      )
      .optional()
      .describe('Every bad field, located by its JSON path.'),
  })
  .describe('RFC 9457 problem details.');

export type ProblemDetails = z.infer<typeof ProblemDetailsSchema>;

const TYPE_BASE = 'https://wobble.invalid/problems/';

/** Status → [type slug, title]. Every status the service answers with a problem is listed here and in OpenAPI. */
export const PROBLEM_TITLES = {
  400: ['invalid-request', 'The request is not a valid proposal'],
  401: ['unauthorized', 'A valid bearer token is required'],
  404: ['not-found', 'No such resource'],
  405: ['method-not-allowed', 'Method not allowed'],
  409: ['cancelled', 'The computation was cancelled'],
  413: ['too-large', 'The request is over a service limit'],
  415: ['unsupported-media-type', 'Send application/json'],
  422: ['unsolvable', 'The proposal is valid but cannot be solved'],
  429: ['rate-limited', 'Too many requests'],
  500: ['internal', 'Internal error'],
  501: ['not-configured', 'Not configured on this deployment'],
  502: ['shard-failed', 'A shard of the request failed'],
  503: ['unavailable', 'The service cannot serve requests'],
} as const satisfies Record<number, readonly [string, string]>;

export type ProblemStatus = keyof typeof PROBLEM_TITLES;

export function problemDetails(status: ProblemStatus, detail: string, extra: { errors?: readonly Problem[] } = {}): ProblemDetails {
  const [slug, title] = PROBLEM_TITLES[status];
  return { type: TYPE_BASE + slug, title, status, detail, ...(extra.errors ? { errors: [...extra.errors] } : {}) };
}

export function problemResponse(status: ProblemStatus, detail: string, extra: { errors?: readonly Problem[]; headers?: Record<string, string> } = {}): Response {
  return new Response(JSON.stringify(problemDetails(status, detail, extra), null, 2), {
    status,
    headers: { ...extra.headers, 'content-type': 'application/problem+json; charset=utf-8' },
  });
}

/** One line per problem, e.g. `weights: expected 10 numbers (one per asset), got 9 weights`. */
export function summarise(problems: readonly Problem[]): string {
  return problems.map((p) => `${p.path || '(body)'}: ${p.message}`).join('\n');
}
