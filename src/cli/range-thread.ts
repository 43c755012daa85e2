import { parentPort } from 'node:worker_threads';
import { computeRange, type RangeRequest } from '../scale/range-job.js';
import type { PlanSolution } from '../stress/engine.js';

/**
 * Entry of one worker thread (src/cli/threads.ts). The thread stays up between ranges, so a
 * thread started early (while the caller validates and plans) or used before computes its next
 * range with modules loaded and code already compiled. For each range message it posts progress,
 * then the binary partial (transferred, not copied), or the error.
 */
export interface RangeMessage {
  readonly type: 'range';
  readonly request: RangeRequest;
  /** The caller's plan solution (structured clone): the thread takes it instead of solving the base optima again. */
  readonly solution?: PlanSolution;
}

export type ThreadMessage =
  | { readonly type: 'progress'; readonly done: number }
  | { readonly type: 'done'; readonly bytes: Uint8Array }
  | { readonly type: 'error'; readonly message: string };

const port = parentPort;
if (port) {
  const post = (message: ThreadMessage, transfer: ArrayBuffer[] = []): void => port.postMessage(message, transfer);
  port.on('message', (message: RangeMessage) => {
    if (message.type !== 'range') return;
    computeRange(message.request, { solution: message.solution, onProgress: (done) => post({ type: 'progress', done }) }).then(
      (bytes) => post({ type: 'done', bytes }, [bytes.buffer as ArrayBuffer]),
      (e: unknown) => post({ type: 'error', message: e instanceof Error ? `${e.name}: ${e.message}` : String(e) }),
    );
  });
}
