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
}
