/**
 * Headers every response carries, errors included. The reviewer page (`GET /`) sets its own
 * Content-Security-Policy; every other response gets a restrictive default: JSON and markdown need
 * nothing, and the HTML report needs only its inline stylesheet and data: images (it embeds an SVG
 * chart inline).
 */

export const API_CSP = "default-src 'none'; frame-ancestors 'none'";
export const REPORT_HTML_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; frame-ancestors 'none'";

/** Cache-Control by kind of response. */
export const CACHE = {
  /** Reports, errors, health: computed per request, may hold a client's data. */
  noStore: 'no-store',
  /** Schemas, OpenAPI, the demo: fixed per release; revalidate with the ETag after a day. */
  static: 'public, max-age=86400',
  /** The page: always revalidated, so a new release shows at once. */
  revalidate: 'no-cache',
} as const;

export type CachePolicy = keyof typeof CACHE;

export function applySecurityHeaders(headers: Headers, options: { ownCsp: boolean }): void {
  headers.set('x-content-type-options', 'nosniff');
  headers.set('referrer-policy', 'no-referrer');
  if (!options.ownCsp && !headers.has('content-security-policy')) {
    const type = headers.get('content-type') ?? '';
    headers.set('content-security-policy', /^text\/html/i.test(type) ? REPORT_HTML_CSP : API_CSP);
  }
}
