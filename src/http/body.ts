import { LIMITS } from '../schema/limits.js';
import { problem, type Problem } from '../schema/problems.js';

export type BodyResult =
  | { ok: true; value: unknown; bytes: number }
  | { ok: false; status: 400 | 413 | 415; detail: string; errors?: Problem[]; headers?: Record<string, string> };

/** Content codings the service decodes (RFC 9110 §8.4.1); anything else is refused with 415. */
const DECODED_CODINGS: Record<string, CompressionFormat | null> = { identity: null, gzip: 'gzip', 'x-gzip': 'gzip', deflate: 'deflate' };
export const ACCEPTED_ENCODINGS = 'gzip, deflate';

/**
 * `application/json`, optionally with `charset=utf-8` (RFC 8259 §8.1: JSON exchanged between
 * systems is UTF-8). Requiring it also means a page on another origin cannot make a visitor's
 * browser send a costly request without a CORS preflight: text/plain, form and multipart bodies
 * are the only ones a browser sends cross-origin without asking first.
 */
export function checkContentType(header: string | null): string | undefined {
  if (header === null || header.trim() === '') return 'send the body with Content-Type: application/json';
  const [type, ...params] = header.split(';').map((part) => part.trim());
  if (type.toLowerCase() !== 'application/json') return `expected Content-Type application/json, got ${header}`;
  for (const param of params) {
    const [name, value = ''] = param.split('=').map((part) => part.trim().toLowerCase());
    if (name === 'charset' && value.replace(/^"|"$/g, '') !== 'utf-8') return `expected a UTF-8 JSON body, got ${param}`;
  }
  return undefined;
}

/**
 * Reads a JSON body with a size limit that holds whether or not Content-Length is sent, and
 * whether or not the body is compressed: the decoded stream is counted as it arrives, so neither a
 * lying header nor a compression bomb gets past it.
 */
export async function readJsonBody(request: Request, maxBytes: number = LIMITS.maxBodyBytes): Promise<BodyResult> {
  const typeProblem = checkContentType(request.headers.get('content-type'));
  if (typeProblem) return { ok: false, status: 415, detail: typeProblem };
  const encoding = (request.headers.get('content-encoding') ?? 'identity').trim().toLowerCase() || 'identity';
  if (!(encoding in DECODED_CODINGS)) {
    return {
      ok: false,
      status: 415,
      detail: `Content-Encoding ${encoding} is not supported; send the body uncompressed or with gzip or deflate`,
      headers: { 'accept-encoding': ACCEPTED_ENCODINGS },
    };
  }
  const declared = Number(request.headers.get('content-length') ?? NaN);
  if (Number.isFinite(declared) && declared > maxBytes) {
    return { ok: false, status: 413, detail: `the body is ${declared} bytes; the limit is ${maxBytes} bytes (maxBodyBytes)` };
  }
  if (!request.body) return { ok: false, status: 400, detail: 'the request has no body; send a JSON proposal' };
  const format = DECODED_CODINGS[encoding];
  const stream = format ? request.body.pipeThrough(new DecompressionStream(format)) : request.body;
  const reader = stream.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      total += value.byteLength;
      if (total > maxBytes) {
        await reader.cancel();
        return { ok: false, status: 413, detail: `the body is over the limit of ${maxBytes} bytes (maxBodyBytes${format ? ', counted after decompression' : ''})` };
      }
      chunks.push(value);
    }
  } catch (e) {
    if (!format) throw e;
    return { ok: false, status: 400, detail: `the body is not valid ${encoding} data`, errors: [problem([], (e as Error).message)] };
  }
  const bytes = new Uint8Array(total);
  let offset = 0;
  for (const c of chunks) {
    bytes.set(c, offset);
    offset += c.byteLength;
  }
  const text = new TextDecoder().decode(bytes);
  if (text.trim() === '') return { ok: false, status: 400, detail: 'the request body is empty; send a JSON proposal' };
  try {
    return { ok: true, value: JSON.parse(text), bytes: total };
  } catch (e) {
    return { ok: false, status: 400, detail: 'the body is not valid JSON', errors: [problem([], (e as Error).message)] };
  }
}
