declare module 'cloudflare:test' {
  // eslint-disable-next-line @typescript-eslint/consistent-type-definitions
  interface ProvidedEnv {}
  export const SELF: { fetch(input: string | Request, init?: RequestInit): Promise<Response> };
}
