import { parentPort } from 'node:worker_threads';
import { ChunkClaims } from '../scale/chunk-claims.js';
import { computePlannedRange } from '../scale/range-job.js';
import type { DrawRange } from '../scale/ranges.js';
import type { Proposal } from '../schema/proposal.js';
import { planStress, type PlanSolution } from '../stress/engine.js';

/**
 * Entry of one worker thread (src/cli/threads.ts). The thread stays up between requests, so a
 * thread started early (while the caller validates and plans) or used before computes with its
 * modules loaded and code already compiled.
 *
 * For each job it takes the caller's validated proposal and plan solution (nothing is validated or
 * solved again: the caller did both, and this is the caller's own code in the caller's process),
 * then claims chunks of the draws from the shared claims until none is left, posting each chunk's
 * binary partial (transferred, not copied) and progress within the chunk. It stops claiming when
 * the claims are stopped, and posts 'finished'; an error posts 'error' and ends the job (the
 * caller computes the chunk again).
 */
export interface ChunkJobMessage {
  readonly type: 'chunks';
  /** The proposal as the caller validated it (structured clone). */
  readonly proposal: Proposal;
  readonly draws: number;
  readonly seed: string | number;
  readonly inputDigest: string;
  readonly solution: PlanSolution;
  readonly chunks: readonly DrawRange[];
  /** The shared claim counter (ChunkClaims' buffer). */
  readonly claims: SharedArrayBuffer;
}

export type ThreadMessage =
  | { readonly type: 'progress'; readonly done: number }
  | { readonly type: 'chunk'; readonly index: number; readonly bytes: Uint8Array }
  | { readonly type: 'finished' }
  | { readonly type: 'error'; readonly message: string };

/** Computes the chunks this thread claims; `post` sends messages to the caller. */
export function runChunkJob(job: ChunkJobMessage, post: (message: ThreadMessage, transfer?: ArrayBuffer[]) => void): void {
  // The caller priced the whole request already: a thread never refuses its share.
  const plan = planStress(job.proposal, [], { draws: job.draws, seed: job.seed, workShares: Number.POSITIVE_INFINITY }, job.solution);
  const claims = new ChunkClaims(job.claims, job.chunks.length);
  for (let k = claims.claim(); k !== undefined; k = claims.claim()) {
    const bytes = computePlannedRange(plan, job.inputDigest, job.chunks[k], (done) => post({ type: 'progress', done }));
    post({ type: 'chunk', index: k, bytes }, [bytes.buffer as ArrayBuffer]);
  }
  post({ type: 'finished' });
}

const port = parentPort;
if (port) {
  const post = (message: ThreadMessage, transfer: ArrayBuffer[] = []): void => port.postMessage(message, transfer);
  port.on('message', (message: ChunkJobMessage) => {
    if (message.type !== 'chunks') return;
    try {
      runChunkJob(message, post);
    } catch (e) {
      post({ type: 'error', message: e instanceof Error ? `${e.name}: ${e.message}` : String(e) });
    }
  });
}
