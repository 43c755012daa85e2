declare module 'cloudflare:test' {
  interface ShardStub {
    fetch(input: string, init?: RequestInit): Promise<Response>;
  }
  // eslint-disable-next-line @typescript-eslint/consistent-type-definitions
  interface ProvidedEnv {
    STRESS_SHARD: { newUniqueId(): unknown; get(id: unknown): ShardStub };
  }
  export const SELF: { fetch(input: string | Request, init?: RequestInit): Promise<Response> };
  export const env: ProvidedEnv;
}
