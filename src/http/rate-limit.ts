import type { RateLimitBinding } from './config.js';

/**
 * Per-client rate limit through Cloudflare's rate-limiting binding. The client is its token when
 * one is configured (a digest prefix, never the token itself), else its address as Cloudflare
 * reports it. Counts are kept per Cloudflare location and are approximate (the binding's documented
 * behaviour): this stops floods and runaway scripts, not a determined distributed caller.
 */

/** Seconds a refused caller should wait: the binding's period (wrangler.toml [[ratelimits]] simple.period). */
export const RETRY_AFTER_SECONDS = 60;

export function clientKey(request: Request, tokenKey: string | undefined): string {
  if (tokenKey) return tokenKey;
  const address = request.headers.get('cf-connecting-ip');
  return address ? `ip:${address}` : 'ip:unknown';
}

/**
 * True when the request may go on. No binding (Node, a deployment without [[ratelimits]]): no
 * limit. If the binding itself fails, the request goes on and the failure is logged: the limit
 * guards against floods, it is not access control (the token is), so an outage of the counter
 * should not take the service down with it.
 */
export async function withinRateLimit(limiter: RateLimitBinding | undefined, key: string): Promise<boolean> {
  if (!limiter) return true;
  try {
    const { success } = await limiter.limit({ key });
    return success;
  } catch (e) {
    console.error('wobble rate limit: the binding failed; letting the request through', e);
    return true;
  }
}
