import type { Problem } from '../schema/problems.js';

/** RFC 9457 problem details, with the JSON path of every bad field. */
export interface ProblemDetails {
  type: string;
  title: string;
  status: number;
  detail: string;
  errors?: readonly Problem[];
  [extension: string]: unknown;
}

const TYPE_BASE = 'https://wobble.invalid/problems/';

const TITLES: Record<number, [string, string]> = {
  400: ['invalid-request', 'The request is not a valid proposal'],
  404: ['not-found', 'No such resource'],
  405: ['method-not-allowed', 'Method not allowed'],
  413: ['too-large', 'The request is over a service limit'],
  415: ['unsupported-media-type', 'Send application/json'],
  422: ['unsolvable', 'The proposal is valid but cannot be solved'],
  500: ['internal', 'Internal error'],
  501: ['not-implemented', 'Not implemented yet'],
};

export function problemDetails(status: number, detail: string, extra: Partial<ProblemDetails> = {}): ProblemDetails {
  const [slug, title] = TITLES[status] ?? ['error', 'Error'];
  return { type: TYPE_BASE + slug, title, status, detail, ...extra };
}

export function problemResponse(status: number, detail: string, extra: Partial<ProblemDetails> = {}): Response {
  return new Response(JSON.stringify(problemDetails(status, detail, extra), null, 2), {
    status,
    headers: { 'content-type': 'application/problem+json; charset=utf-8' },
  });
}

/** One line per problem, e.g. `weights: expected 10 numbers (one per asset), got 9 weights`. */
export function summarise(problems: readonly Problem[]): string {
  return problems.map((p) => `${p.path || '(body)'}: ${p.message}`).join('\n');
}
