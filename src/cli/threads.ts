import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { computeRange, type RangeRequest } from '../scale/range-job.js';
import { RangeCancelledError } from '../scale/errors.js';
import { fanOutRunner, type RangeExecutor } from '../scale/runner.js';
import type { DrawRunner } from '../stress/run.js';
import type { ThreadMessage } from './range-thread.js';

/** Default --threads: the cores Node may use, at most this many (more threads than cores only add start-up and memory). */
export const MAX_DEFAULT_THREADS = 8;

/**
 * Below this estimated work the default splits nothing: starting a thread and re-planning in it
 * costs more than it saves. The work model prices worst cases (src/cost), so typical requests run
 * at 0.3–1 ns per counted unit: the demo at 500 draws is priced 1.9e9 units and takes 0.65 s in
 * one thread, and was slower with 2 threads (1.8 s wall against 1.1 s, measured on the 2-core
 * development machine). 1e10 units is a few seconds of single-thread CPU, where two threads pay
 * off. From TypeScript sources every thread also starts tsx and compiles the core (seconds), so
 * there the default waits for ten times as much. An explicit --threads N always splits.
 */
export const AUTO_THREADS_MIN_WORK = 1e10;
export const AUTO_THREADS_MIN_WORK_FROM_SOURCES = 1e11;

function automaticMinWork(): number {
  return import.meta.url.endsWith('.ts') ? AUTO_THREADS_MIN_WORK_FROM_SOURCES : AUTO_THREADS_MIN_WORK;
}

export function defaultThreads(): number {
  return Math.max(1, Math.min(MAX_DEFAULT_THREADS, availableParallelism()));
}

/**
 * Starts a worker thread computing one range. From a TypeScript checkout (tsx, vitest) the thread
 * loads the .ts entry through tsx's API; from built JavaScript it loads range-thread.js beside this file.
 */
function startRangeThread(request: RangeRequest, entry?: URL): Worker {
  if (entry) return new Worker(entry, { workerData: request });
  const here = import.meta.url;
  if (!here.endsWith('.ts')) return new Worker(new URL('./range-thread.js', here), { workerData: request });
  const tsxPackage = createRequire(here).resolve('tsx/package.json');
  const tsxApi = pathToFileURL(tsxPackage.replace(/package\.json$/, 'dist/esm/api/index.mjs')).href;
  const source = `import(${JSON.stringify(tsxApi)}).then(({ tsImport }) => tsImport(${JSON.stringify(new URL('./range-thread.ts', here).href)}, ${JSON.stringify(here)}))`;
  return new Worker(source, { eval: true, workerData: request });
}

/**
 * Computes a range on a new worker thread; terminating the thread is how a range is stopped.
 * `entry` overrides the thread's module (e.g. a bundled range-thread for benchmarks).
 */
export const threadExecutor =
  (entry?: URL): RangeExecutor =>
  (request, { signal, onProgress }) =>
  new Promise<Uint8Array>((resolve, reject) => {
    if (signal.aborted) return reject(new RangeCancelledError());
    const worker = startRangeThread(request, entry);
    let settled = false;
    const settle = (action: () => void): void => {
      if (settled) return;
      settled = true;
      signal.removeEventListener('abort', onAbort);
      action();
      void worker.terminate();
    };
    const onAbort = (): void => settle(() => reject(new RangeCancelledError()));
    signal.addEventListener('abort', onAbort, { once: true });
    worker.on('message', (m: ThreadMessage) => {
      if (m.type === 'progress') onProgress(m.done);
      else if (m.type === 'done') settle(() => resolve(m.bytes));
      else settle(() => reject(new Error(m.message)));
    });
    worker.on('error', (e) => settle(() => reject(e)));
    worker.on('exit', (code) => settle(() => reject(new Error(`the thread exited with code ${code} before finishing`))));
  });

/**
 * Computes a range on this thread, after letting the other ranges' threads start (the draws run
 * synchronously and would hold them back). It cannot be interrupted; a cancel is noticed when it ends.
 */
const computeHere: RangeExecutor = async (request, { signal, onProgress }) => {
  await new Promise((resolve) => setTimeout(resolve, 0));
  if (signal.aborted) throw new RangeCancelledError();
  const bytes = await computeRange(request, { onProgress });
  if (signal.aborted) throw new RangeCancelledError();
  return bytes;
};

/**
 * Splits the draws over `threads` threads (this one and threads − 1 worker threads), one contiguous
 * range each, merged into the same report as one loop (meta.threads records the split). With
 * `automatic` (no --threads given), small requests stay on this thread.
 */
export function threadRunner(threads: number, automatic: boolean, entry?: URL): DrawRunner {
  const onThread = threadExecutor(entry);
  return fanOutRunner({
    parts: automatic ? (plan) => (plan.workUnits < (entry ? AUTO_THREADS_MIN_WORK : automaticMinWork()) ? 'here' : threads) : threads,
    // The first range runs on this thread (one thread start, module load and JIT warm-up fewer);
    // its retry, if any, on a worker thread.
    execute: (request, context) => (context.range.index === 0 && context.attempt === 1 ? computeHere(request, context) : onThread(request, context)),
    unit: 'thread',
  });
}
