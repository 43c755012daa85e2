import type { Context } from 'hono';
import type { z } from 'zod';
import type { ServiceBindings, ServiceConfig } from './config.js';
import type { ProblemStatus } from './problem.js';
import type { CachePolicy } from './security-headers.js';
import type { ComponentName } from './components.js';

/**
 * One route: what it does, what it accepts and answers, and the handler. The app registers the
 * handlers from this table and the OpenAPI document is generated from it, so the two cannot drift.
 */

export type AppEnv = { Bindings: ServiceBindings | undefined; Variables: { config: ServiceConfig; routes: readonly RouteDefinition[] } };
export type AppContext = Context<AppEnv>;

/** A response body: a named component (zod schema) or free text of a media type. */
export type Body = { readonly component: ComponentName } | { readonly text: string };

export interface SuccessResponse {
  readonly description: string;
  /** Media type → body. */
  readonly content: Readonly<Record<string, Body>>;
  /** Headers documented on the response. */
  readonly headers?: readonly ('ETag' | 'Cache-Control')[];
}

export interface RouteDefinition {
  readonly method: 'get' | 'post';
  /** OpenAPI path template, e.g. `/v1/schemas/{name}`. */
  readonly path: string;
  readonly operationId: string;
  readonly summary: string;
  readonly description: string;
  readonly tag: 'report' | 'discovery' | 'service';
  /** Needs the bearer token (when one is configured) and counts against the rate limit. */
  readonly protected: boolean;
  readonly cache: CachePolicy;
  /** The handler sets its own Content-Security-Policy (the reviewer page). */
  readonly ownCsp?: boolean;
  readonly query?: z.ZodObject;
  readonly pathParams?: z.ZodObject;
  readonly requestBody?: { readonly component: ComponentName; readonly description: string };
  readonly success: SuccessResponse & { readonly status?: 200 };
  /** Problem statuses this route itself can answer (401/405/415/429/500 are added from the rest of the table). */
  readonly problems: readonly ProblemStatus[];
  readonly handle: (c: AppContext, config: ServiceConfig) => Response | Promise<Response>;
}

/** `/v1/schemas/{name}` → `/v1/schemas/:name` (Hono's syntax). */
export function honoPath(path: string): string {
  return path.replace(/\{(\w+)\}/g, ':$1');
}

/** A matcher for the concrete paths of a template. */
export function pathMatcher(path: string): RegExp {
  const escaped = path.replace(/[.*+?^$()|[\]\\]/g, '\\$&');
  return new RegExp(`^${escaped.replace(/\{(\w+)\}/g, '[^/]+')}$`);
}
