import { parentPort, workerData } from 'node:worker_threads';
import { computeRange, type RangeRequest } from '../scale/range-job.js';

/**
 * Entry of one worker thread (src/cli/threads.ts): computes the range in workerData and posts
 * progress, then the binary partial (transferred, not copied), or the error.
 */
export type ThreadMessage =
  | { readonly type: 'progress'; readonly done: number }
  | { readonly type: 'done'; readonly bytes: Uint8Array }
  | { readonly type: 'error'; readonly message: string };

const port = parentPort;
if (port) {
  const post = (message: ThreadMessage, transfer: ArrayBuffer[] = []): void => port.postMessage(message, transfer);
  computeRange(workerData as RangeRequest, { onProgress: (done) => post({ type: 'progress', done }) }).then(
    (bytes) => post({ type: 'done', bytes }, [bytes.buffer as ArrayBuffer]),
    (e: unknown) => post({ type: 'error', message: e instanceof Error ? `${e.name}: ${e.message}` : String(e) }),
  );
}
