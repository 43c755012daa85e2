import { normaliseOrigin, type CorsOrigins } from './config.js';

/**
 * CORS (Fetch standard) for browser callers on other origins. No credentials mode: the token
 * travels in the Authorization header, which a page must add itself, so no cookie is ever involved.
 */

/** Request headers a cross-origin caller may send. */
export const ALLOWED_REQUEST_HEADERS = 'Authorization, Content-Type, Content-Encoding, If-None-Match';
/** Response headers a cross-origin caller may read besides the safelisted ones. */
export const EXPOSED_RESPONSE_HEADERS = 'ETag, Retry-After, WWW-Authenticate, Allow';
/** How long a browser may cache a preflight answer (seconds; Chromium caps it at 7200). */
export const PREFLIGHT_MAX_AGE = 7200;

/** The Access-Control-Allow-Origin value for this origin, or undefined when it is not allowed. */
export function allowedOrigin(origin: string | null, cors: CorsOrigins): string | undefined {
  if (cors.any) return '*';
  if (origin === null) return undefined;
  return cors.origins.has(normaliseOrigin(origin)) ? origin : undefined;
}

/** Headers added to every response (preflight or not). */
export function corsHeaders(origin: string | null, cors: CorsOrigins): Record<string, string> {
  const headers: Record<string, string> = {};
  // With a list, the answer depends on Origin, so shared caches must key on it.
  if (!cors.any) headers['vary'] = 'Origin';
  const allowed = allowedOrigin(origin, cors);
  if (allowed === undefined) return headers;
  headers['access-control-allow-origin'] = allowed;
  headers['access-control-expose-headers'] = EXPOSED_RESPONSE_HEADERS;
  return headers;
}

/** Is this OPTIONS request a CORS preflight (it names the method it wants to send)? */
export function isPreflight(request: Request): boolean {
  return request.method === 'OPTIONS' && request.headers.has('origin') && request.headers.has('access-control-request-method');
}

/** Extra headers of a preflight answer for an allowed origin (none for a refused one: the browser then blocks the call). */
export function preflightHeaders(origin: string | null, cors: CorsOrigins, allow: readonly string[]): Record<string, string> {
  if (allowedOrigin(origin, cors) === undefined) return {};
  return {
    'access-control-allow-methods': allow.join(', '),
    'access-control-allow-headers': ALLOWED_REQUEST_HEADERS,
    'access-control-max-age': String(PREFLIGHT_MAX_AGE),
  };
}
