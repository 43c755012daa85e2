import type { ShardNamespace } from './shards.js';

/**
 * What a deployment configures (wrangler.toml vars, `wrangler secret put`, bindings), read once per
 * request from the Worker's env. Everything is optional: with nothing set the service is open,
 * answers any origin and uses the built-in limits.
 */

/** Cloudflare's Workers rate-limiting binding ([[ratelimits]] in wrangler.toml). */
export interface RateLimitBinding {
  limit(options: { key: string }): Promise<{ success: boolean }>;
}

export interface ServiceBindings {
  /** Bearer token(s) for the /v1/* POST routes; several comma-separated tokens allow rotation. A secret. */
  WOBBLE_API_TOKEN?: string;
  /** Origins allowed to call the API from a browser: a comma list, or `*`. */
  WOBBLE_CORS_ORIGINS?: string;
  /** A work limit below the built-in one, for plans with a small CPU allowance (413 above it). */
  WOBBLE_MAX_WORK?: string;
  /** Requests per client per period on the /v1/* POST routes (absent: no rate limit). */
  WOBBLE_RATE_LIMITER?: RateLimitBinding;
  /** Durable Objects that compute ranges of draws for POST /v1/stress?shards=N (src/http/shards.ts). */
  STRESS_SHARD?: ShardNamespace;
}

export type CorsOrigins = { readonly any: true } | { readonly any: false; readonly origins: ReadonlySet<string> };

export interface ServiceConfig {
  /** Accepted bearer tokens; empty means no token is required. */
  readonly tokens: readonly string[];
  readonly cors: CorsOrigins;
  /** A lower work maximum than the built-in one (WOBBLE_MAX_WORK); absent: the built-in limit. */
  readonly maxWork?: number;
  readonly rateLimiter?: RateLimitBinding;
  /** Settings that could not be read. The protected routes refuse to run while any is present (fail closed). */
  readonly problems: readonly string[];
}

const list = (value: string): string[] =>
  value
    .split(',')
    .map((item) => item.trim())
    .filter((item) => item !== '');

/** `https://Example.com/` and `https://example.com` name the same origin; browsers send the latter. */
export function normaliseOrigin(origin: string): string {
  return origin.trim().replace(/\/+$/, '').toLowerCase();
}

export function readConfig(env: ServiceBindings | undefined): ServiceConfig {
  const problems: string[] = [];
  const rawTokens = typeof env?.WOBBLE_API_TOKEN === 'string' ? env.WOBBLE_API_TOKEN : undefined;
  const tokens = rawTokens === undefined ? [] : list(rawTokens);
  if (rawTokens !== undefined && tokens.length === 0) {
    // A secret that is set but empty must not silently open the service.
    problems.push('WOBBLE_API_TOKEN is set but holds no token');
  }
  if (tokens.some((t) => /\s/.test(t))) problems.push('WOBBLE_API_TOKEN: a token may not contain white space');

  const rawOrigins = typeof env?.WOBBLE_CORS_ORIGINS === 'string' ? list(env.WOBBLE_CORS_ORIGINS) : undefined;
  let cors: CorsOrigins;
  if (rawOrigins === undefined || rawOrigins.length === 0) {
    // Without a token the API is public anyway, so any page may call it. With a token, browsers on
    // other origins are refused until the operator names them: least privilege by default.
    cors = tokens.length === 0 && rawTokens === undefined ? { any: true } : { any: false, origins: new Set() };
  } else if (rawOrigins.includes('*')) {
    cors = { any: true };
  } else {
    const bad = rawOrigins.filter((o) => !/^https?:\/\/[^/\s]+\/?$/i.test(o));
    if (bad.length > 0) problems.push(`WOBBLE_CORS_ORIGINS: expected origins like https://app.example.com, got ${bad.join(', ')}`);
    cors = { any: false, origins: new Set(rawOrigins.map(normaliseOrigin)) };
  }

  let maxWork: number | undefined;
  const rawWork = typeof env?.WOBBLE_MAX_WORK === 'string' ? env.WOBBLE_MAX_WORK.trim() : '';
  if (rawWork !== '') {
    const value = Number(rawWork);
    if (Number.isFinite(value) && value > 0) maxWork = value;
    else problems.push(`WOBBLE_MAX_WORK: expected a positive number of work units (e.g. 2e8), got "${rawWork}"`);
  }

  const limiter = env?.WOBBLE_RATE_LIMITER;
  const rateLimiter = limiter && typeof limiter.limit === 'function' ? limiter : undefined;
  return { tokens, cors, ...(maxWork === undefined ? {} : { maxWork }), rateLimiter, problems };
}
