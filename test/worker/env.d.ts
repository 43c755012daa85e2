declare module 'cloudflare:test' {
  interface ShardStub {
    fetch(input: string, init?: RequestInit): Promise<Response>;
  }
  interface RateLimit {
    limit(options: { key: string }): Promise<{ success: boolean }>;
  }
  // eslint-disable-next-line @typescript-eslint/consistent-type-definitions
  interface ProvidedEnv {
    WOBBLE_RATE_LIMITER: RateLimit;
    TIGHT_RATE_LIMITER: RateLimit;
    STRESS_SHARD: { newUniqueId(): unknown; get(id: unknown): ShardStub };
  }
  export const SELF: { fetch(input: string | Request, init?: RequestInit): Promise<Response> };
  export const env: ProvidedEnv;
  /** Runs `callback` inside the Durable Object behind `stub` (here: to reset it, see shard-faults.ts). */
  export function runInDurableObject<R>(stub: ShardStub, callback: (instance: unknown, state: { abort(reason?: string): void }) => R | Promise<R>): Promise<R>;
}
