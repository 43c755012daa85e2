import { RangeRefusedError } from './errors.js';
import { PARTIAL_MEDIA_TYPE } from './wire.js';

/** A short reason from an error answer (problem+json detail, else the start of the text). */
async function answerDetail(response: Response): Promise<string> {
  const text = await response.text().catch(() => '');
  try {
    const problem = JSON.parse(text) as { detail?: unknown };
    if (typeof problem.detail === 'string') return problem.detail;
  } catch {
    // not JSON: the raw text below
  }
  return text.slice(0, 300) || response.statusText;
}

/**
 * The partial result in an answer to a range request (a Durable Object's or a service's). A 4xx
 * other than 408/429 is a refusal that a retry cannot change (RangeRefusedError); any other
 * failure is an Error the fan-out retries once.
 */
export async function readPartialResponse(response: Response, where: string): Promise<Uint8Array> {
  if (response.ok && (response.headers.get('content-type') ?? '').startsWith(PARTIAL_MEDIA_TYPE)) return new Uint8Array(await response.arrayBuffer());
  const detail = response.ok ? `expected ${PARTIAL_MEDIA_TYPE}, got ${response.headers.get('content-type')}` : await answerDetail(response);
  const message = `${where} answered ${response.status}: ${detail}`;
  if (response.status >= 400 && response.status < 500 && response.status !== 408 && response.status !== 429) throw new RangeRefusedError(response.status, message);
  throw new Error(message);
}
