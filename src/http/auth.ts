/**
 * Bearer-token check (RFC 6750) for the protected routes. Tokens are compared through their
 * SHA-256 digests with a fixed-length XOR loop, so the time taken depends neither on where the
 * first differing byte is nor on the presented token's length. Every configured token is compared
 * (no early exit), so timing says nothing about which one matched.
 */

const encoder = new TextEncoder();

async function digest(text: string): Promise<Uint8Array> {
  return new Uint8Array(await crypto.subtle.digest('SHA-256', encoder.encode(text)));
}

/** Constant-time equality of two equal-length digests. */
function sameDigest(a: Uint8Array, b: Uint8Array): boolean {
  let difference = a.length ^ b.length;
  for (let i = 0; i < a.length; i++) difference |= a[i] ^ (b[i] ?? 0);
  return difference === 0;
}

/** The token from `Authorization: Bearer <token>`, or why there is none. */
export function bearerToken(header: string | null): { token: string } | { missing: true } | { malformed: true } {
  if (header === null || header.trim() === '') return { missing: true };
  const match = /^Bearer[ ]+([A-Za-z0-9\-._~+/]+=*)[ ]*$/i.exec(header);
  return match ? { token: match[1] } : { malformed: true };
}

export type AuthResult = { ok: true; key?: string } | { ok: false; error: 'missing' | 'invalid_request' | 'invalid_token'; detail: string };

/**
 * Checks the Authorization header against the configured tokens. On success `key` is a stable,
 * non-secret identifier of the caller's token (the first 16 hex digits of its digest), used as the
 * rate-limit key.
 */
export async function authorise(header: string | null, tokens: readonly string[]): Promise<AuthResult> {
  if (tokens.length === 0) return { ok: true };
  const presented = bearerToken(header);
  if ('missing' in presented) return { ok: false, error: 'missing', detail: 'this service requires a token: send Authorization: Bearer <token>' };
  if ('malformed' in presented) return { ok: false, error: 'invalid_request', detail: 'the Authorization header is not of the form Bearer <token>' };
  const given = await digest(presented.token);
  let matched = false;
  for (const token of tokens) {
    const expected = await digest(token);
    // The comparison runs for every token whatever the outcome so far (it is evaluated before `||`).
    matched = sameDigest(given, expected) || matched;
  }
  if (!matched) return { ok: false, error: 'invalid_token', detail: 'the bearer token is not valid for this service' };
  let key = '';
  for (let i = 0; i < 8; i++) key += given[i].toString(16).padStart(2, '0');
  return { ok: true, key: `token:${key}` };
}

/** The WWW-Authenticate challenge for a 401 (RFC 6750 §3). */
export function challenge(error: 'missing' | 'invalid_request' | 'invalid_token'): string {
  return error === 'missing' ? 'Bearer realm="wobble"' : `Bearer realm="wobble", error="${error}"`;
}
