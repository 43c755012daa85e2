import { WobbleProblemError, type ProblemBody } from '../problem-error.js';
import type { Policy, ProposalInput } from '../schema/proposal.js';
import type { OptimizeResponse, Report } from '../schema/report.js';

/**
 * A typed client for a deployed wobble service: `import { createClient } from 'wobble/client'`.
 * Uses only fetch, AbortController and timers, so it runs unchanged in Node 20, browsers and
 * Workers. A problem+json answer (400, 401, 413, 415, 422, …) becomes a WobbleProblemError with
 * the status and every bad field's JSON path; only type imports reach the engine's schemas.
 */

export { WobbleProblemError, type ProblemBody, type ProblemEntry } from '../problem-error.js';
export type { OptimizeResponse, Policy, ProposalInput, Report };

export interface ClientOptions {
  /** The service's origin (and path prefix, if any), e.g. `https://wobble.example.org`. */
  readonly baseUrl: string;
  /** Sent as `Authorization: Bearer <token>` when the service requires one. */
  readonly token?: string;
  /** Milliseconds before a request is abandoned (default 120 000; stress runs are CPU-bound). 0 disables. */
  readonly timeoutMs?: number;
  /** A fetch implementation (default: the global one). */
  readonly fetch?: typeof fetch;
}

export interface RequestOptions {
  /** Abandons the request when aborted (the promise rejects with the signal's reason). */
  readonly signal?: AbortSignal;
  /** Overrides the client's timeout for this request. */
  readonly timeoutMs?: number;
}

/** The body of POST /v1/check. */
export interface CheckBody {
  readonly proposal: ProposalInput | Record<string, unknown>;
  readonly policy?: Policy | Record<string, unknown>;
  readonly baseline?: ProposalInput | Report | Record<string, unknown>;
}

/** Thrown when a request takes longer than its timeout. */
export class WobbleTimeoutError extends Error {
  readonly timeoutMs: number;
  constructor(timeoutMs: number, url: string) {
    super(`no answer from ${url} within ${timeoutMs} ms`);
    this.name = 'WobbleTimeoutError';
    this.timeoutMs = timeoutMs;
  }
}

export interface WobbleClient {
  /** GET /healthz */
  health(options?: RequestOptions): Promise<{ status: string; version: string }>;
  /** GET /v1/examples/demo — the built-in demo proposal. */
  demo(options?: RequestOptions): Promise<ProposalInput>;
  /** GET /v1/schemas/:name — a JSON Schema 2020-12. */
  schema(name: 'proposal' | 'report' | 'policy', options?: RequestOptions): Promise<Record<string, unknown>>;
  /** POST /v1/optimize — every requested method's optimum on the unperturbed inputs. */
  optimize(proposal: ProposalInput | Record<string, unknown>, options?: RequestOptions): Promise<OptimizeResponse>;
  /** POST /v1/stress — the robustness report. */
  stress(proposal: ProposalInput | Record<string, unknown>, options?: RequestOptions): Promise<Report>;
  /** POST /v1/stress?format=markdown|html — the report rendered by the service. */
  stressRendered(proposal: ProposalInput | Record<string, unknown>, format: 'markdown' | 'html', options?: RequestOptions): Promise<string>;
  /** POST /v1/check — the report with its verdict (a failed gate is `verdict.pass === false`, not an error). */
  check(body: CheckBody, options?: RequestOptions): Promise<Report>;
}

const DEFAULT_TIMEOUT_MS = 120_000;

export function createClient(options: ClientOptions): WobbleClient {
  const base = options.baseUrl.replace(/\/+$/, '');
  if (!/^https?:\/\//i.test(base)) throw new TypeError(`baseUrl must be an http(s) URL, got "${options.baseUrl}"`);
  const fetchImpl = options.fetch ?? ((input: RequestInfo | URL, init?: RequestInit) => fetch(input, init));

  /** One request; the body is read inside the timeout too, so a stalled body counts against it. */
  async function call<T>(method: 'GET' | 'POST', path: string, body: unknown, read: (r: Response) => Promise<T>, request: RequestOptions = {}): Promise<T> {
    const url = base + path;
    const headers: Record<string, string> = { accept: 'application/json, application/problem+json;q=0.9, */*;q=0.1' };
    if (body !== undefined) headers['content-type'] = 'application/json';
    if (options.token) headers.authorization = `Bearer ${options.token}`;
    const timeoutMs = request.timeoutMs ?? options.timeoutMs ?? DEFAULT_TIMEOUT_MS;
    const controller = new AbortController();
    let timedOut = false;
    const timer = timeoutMs > 0 ? setTimeout(() => ((timedOut = true), controller.abort()), timeoutMs) : undefined;
    const outer = request.signal;
    const forward = (): void => controller.abort(outer?.reason);
    if (outer?.aborted) forward();
    else outer?.addEventListener('abort', forward, { once: true });
    try {
      const response = await fetchImpl(url, { method, headers, body: body === undefined ? undefined : JSON.stringify(body), signal: controller.signal });
      if (!response.ok) throw await problemFrom(response);
      return await read(response);
    } catch (e) {
      if (timedOut) throw new WobbleTimeoutError(timeoutMs, url);
      if (outer?.aborted) throw outer.reason ?? e;
      throw e;
    } finally {
      if (timer !== undefined) clearTimeout(timer);
      outer?.removeEventListener('abort', forward);
    }
  }

  const json = <T>(method: 'GET' | 'POST', path: string, body: unknown, request?: RequestOptions): Promise<T> => call(method, path, body, (r) => r.json() as Promise<T>, request);

  return {
    health: (o) => json('GET', '/healthz', undefined, o),
    demo: (o) => json('GET', '/v1/examples/demo', undefined, o),
    schema: (name, o) => json('GET', `/v1/schemas/${encodeURIComponent(name)}`, undefined, o),
    optimize: (proposal, o) => json('POST', '/v1/optimize', proposal, o),
    stress: (proposal, o) => json('POST', '/v1/stress', proposal, o),
    stressRendered: (proposal, format, o) => call('POST', `/v1/stress?format=${format}`, proposal, (r) => r.text(), o),
    check: (body, o) => json('POST', '/v1/check', body, o),
  };
}

/** A non-2xx answer as a WobbleProblemError: the service's problem+json when it sent one, else a problem made from the status. */
async function problemFrom(response: Response): Promise<WobbleProblemError> {
  const text = await response.text().catch(() => '');
  if (/\bjson\b/i.test(response.headers.get('content-type') ?? '')) {
    try {
      const body = JSON.parse(text) as Partial<ProblemBody>;
      if (body && typeof body === 'object' && typeof body.title === 'string') {
        return new WobbleProblemError({ ...body, type: body.type ?? 'about:blank', title: body.title, status: response.status, detail: String(body.detail ?? '') });
      }
    } catch {
      // Not JSON after all: fall through to a problem made from the status.
    }
  }
  return new WobbleProblemError({ type: 'about:blank', title: response.statusText || `HTTP ${response.status}`, status: response.status, detail: text.slice(0, 500) });
}
