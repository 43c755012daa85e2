import { canonicalJson } from '../schema/canonical-json.js';

/**
 * The SHA-256 of a value's canonical JSON, for meta.inputDigest.
 * Uses WebCrypto (globalThis.crypto.subtle), present in Node ≥ 20, the Workers runtime and browsers.
 */

export async function sha256Hex(text: string): Promise<string> {
  const digest = await globalThis.crypto.subtle.digest('SHA-256', new TextEncoder().encode(text));
  return Array.from(new Uint8Array(digest), (b) => b.toString(16).padStart(2, '0')).join('');
}

export function inputDigest(value: unknown): Promise<string> {
  return sha256Hex(canonicalJson(value));
}

