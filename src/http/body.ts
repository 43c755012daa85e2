import { LIMITS } from '../schema/limits.js';
import { problem, type Problem } from '../schema/problems.js';

export type BodyResult = { ok: true; value: unknown; bytes: number } | { ok: false; status: 400 | 413 | 415; detail: string; errors?: Problem[] };

/**
 * Reads a JSON body with a size limit that holds whether or not Content-Length is sent
 * (the stream is counted as it arrives, so a lying or absent header cannot get past it).
 */
export async function readJsonBody(request: Request, maxBytes: number = LIMITS.maxBodyBytes): Promise<BodyResult> {
  const type = request.headers.get('content-type') ?? '';
  if (type && !/^application\/([\w.+-]*\+)?json\b/i.test(type) && !/^text\/plain\b/i.test(type)) {
    return { ok: false, status: 415, detail: `expected Content-Type application/json, got ${type}` };
  }
  const declared = Number(request.headers.get('content-length') ?? NaN);
  if (Number.isFinite(declared) && declared > maxBytes) {
    return { ok: false, status: 413, detail: `the body is ${declared} bytes; the limit is ${maxBytes} bytes (maxBodyBytes)` };
  }
  if (!request.body) return { ok: false, status: 400, detail: 'the request has no body; send a JSON proposal' };
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > maxBytes) {
      await reader.cancel();
      return { ok: false, status: 413, detail: `the body is over the limit of ${maxBytes} bytes (maxBodyBytes)` };
    }
    chunks.push(value);
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
