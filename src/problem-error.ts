/**
 * One error type for "the request cannot be answered as sent", shared by the library (thrown
 * before or instead of a run) and the HTTP client (built from an RFC 9457 problem+json response),
 * so a caller handles both the same way. Plain TypeScript: no Node, Workers or engine imports.
 */

/** One bad field, located by its JSON path (same shape as the service's problem+json `errors[]`). */
export interface ProblemEntry {
  /** Dotted path with indices, e.g. `inputs.covariance[2][1]`; `` for the whole body. */
  readonly path: string;
  /** RFC 6901 JSON Pointer to the same place, e.g. `/inputs/covariance/2/1`. */
  readonly pointer: string;
  readonly message: string;
  /** `limit`: over a service limit (413); `unsolvable`: well-formed but has no answer (422); absent: malformed (400). */
  readonly kind?: 'limit' | 'unsolvable';
}

/** RFC 9457 problem details as the service sends them. */
export interface ProblemBody {
  readonly type: string;
  readonly title: string;
  readonly status: number;
  readonly detail: string;
  readonly errors?: readonly ProblemEntry[];
  readonly [extension: string]: unknown;
}

export class WobbleProblemError extends Error {
  /** HTTP status the service gives this problem (400 malformed, 401, 413 over a limit, 415, 422 unsolvable, 5xx). */
  readonly status: number;
  readonly type: string;
  readonly title: string;
  readonly detail: string;
  /** Every bad field with its JSON path; empty when the problem is not about one field. */
  readonly errors: readonly ProblemEntry[];
  /** The whole problem body, extensions included. */
  readonly problem: ProblemBody;

  constructor(problem: ProblemBody) {
    const first = problem.errors?.[0];
    super(`${problem.status} ${problem.title}: ${first && problem.detail.indexOf(first.message) < 0 ? `${first.path || '(body)'}: ${first.message}` : problem.detail}`);
    this.name = 'WobbleProblemError';
    this.status = problem.status;
    this.type = problem.type;
    this.title = problem.title;
    this.detail = problem.detail;
    this.errors = problem.errors ?? [];
    this.problem = problem;
  }
}
