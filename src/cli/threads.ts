import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { computeRange } from '../scale/range-job.js';
import { RangeCancelledError } from '../scale/errors.js';
import { fanOutRunner, type RangeExecutor } from '../scale/runner.js';
import { planForecastSensitivity } from '../stress/plan-summary.js';
import type { DrawRunner } from '../stress/run.js';
import type { RangeMessage, ThreadMessage } from './range-thread.js';

/** Default --threads: the cores Node may use, at most this many (more threads than cores only add start-up and memory). */
export const MAX_DEFAULT_THREADS = 8;

/**
 * Below this estimated work the default splits nothing: starting a thread (module load, JIT
 * warm-up of a cold thread: about 0.4 s wall on the 2-core development machine) costs more than it
 * saves. Measured with `npm run bench:scale` (fresh CLI processes on the built package, best of 3):
 * the 30-asset, six-method, 1500-draw history, priced 7.7e9 units, took 3.18 s with --threads 1
 * and 2.60 s with --threads 2; the demo at 500 draws, priced 1.4e9, is faster on one thread. So the
 * default splits from 5e9 units (a couple of seconds of one core). From TypeScript sources every
 * thread also starts tsx and compiles the core (seconds), so there the default waits for ten
 * times as much. An explicit --threads N always splits.
 */
export const AUTO_THREADS_MIN_WORK = 5e9;
export const AUTO_THREADS_MIN_WORK_FROM_SOURCES = 5e10;

function automaticMinWork(): number {
  return import.meta.url.endsWith('.ts') ? AUTO_THREADS_MIN_WORK_FROM_SOURCES : AUTO_THREADS_MIN_WORK;
}

export function defaultThreads(): number {
  return Math.max(1, Math.min(MAX_DEFAULT_THREADS, availableParallelism()));
}

/**
 * Starts a worker thread that computes the ranges it is sent (src/cli/range-thread.ts). From a
 * TypeScript checkout (tsx, vitest) the thread loads the .ts entry through tsx's API; from built
 * JavaScript it loads range-thread.js beside this file.
 */
function startRangeThread(entry?: URL): Worker {
  if (entry) return new Worker(entry);
  const here = import.meta.url;
  if (!here.endsWith('.ts')) return new Worker(new URL('./range-thread.js', here));
  const tsxPackage = createRequire(here).resolve('tsx/package.json');
  const tsxApi = pathToFileURL(tsxPackage.replace(/package\.json$/, 'dist/esm/api/index.mjs')).href;
  const source = `import(${JSON.stringify(tsxApi)}).then(({ tsImport }) => tsImport(${JSON.stringify(new URL('./range-thread.ts', here).href)}, ${JSON.stringify(here)}))`;
  return new Worker(source, { eval: true });
}

/**
 * Worker threads kept between ranges. A thread's first range pays for loading the modules and
 * compiling the hot code (for the 30-asset benchmark case about as much CPU as a few hundred
 * draws); threads started early (prestart, while this thread validates and plans) or reused for
 * the next request skip that. Idle threads are unref'd: they never keep the process alive.
 */
export class RangeThreadPool {
  private readonly idle: Worker[] = [];

  /** `entry` overrides the thread's module (e.g. a bundled range-thread for benchmarks). */
  constructor(private readonly entry?: URL) {}

  /** Starts threads until `count` are idle, so their start-up overlaps this thread's work. */
  prestart(count: number): void {
    while (this.idle.length < count) this.idle.push(this.spawn());
  }

  get idleThreads(): number {
    return this.idle.length;
  }

  private spawn(): Worker {
    const worker = startRangeThread(this.entry);
    worker.unref();
    // A thread that dies while idle leaves the pool (its error is reported to whoever uses it next: nobody).
    const drop = (): void => {
      const at = this.idle.indexOf(worker);
      if (at >= 0) this.idle.splice(at, 1);
    };
    worker.on('error', drop);
    worker.on('exit', drop);
    return worker;
  }

  /** An idle thread (the longest idle), else a new one; it keeps the process alive until released. */
  acquire(): Worker {
    const worker = this.idle.shift() ?? this.spawn();
    worker.ref();
    return worker;
  }

  /** Returns a thread that finished its range cleanly. */
  release(worker: Worker): void {
    worker.unref();
    this.idle.push(worker);
  }

  /** Stops the idle threads. */
  async close(): Promise<void> {
    await Promise.all(this.idle.splice(0).map((w) => w.terminate()));
  }
}

/**
 * Computes a range on a pooled worker thread, sending the caller's plan solution along so the
 * thread does not solve the base optima again. Terminating the thread is how a range is stopped
 * (a stopped or failed thread is not reused). `shipPlan: false` lets the thread plan for itself
 * (the path before plan hand-over, kept for the benchmark's comparison).
 */
export const threadExecutor =
  (pool: RangeThreadPool, { shipPlan = true }: { shipPlan?: boolean } = {}): RangeExecutor =>
  (request, { signal, onProgress, plan }) =>
    new Promise<Uint8Array>((resolve, reject) => {
      if (signal.aborted) return reject(new RangeCancelledError());
      const worker = pool.acquire();
      let settled = false;
      const settle = (action: () => void, reuse: boolean): void => {
        if (settled) return;
        settled = true;
        signal.removeEventListener('abort', onAbort);
        worker.off('message', onMessage);
        worker.off('error', onError);
        worker.off('exit', onExit);
        if (reuse) pool.release(worker);
        else void worker.terminate();
        action();
      };
      const onAbort = (): void => settle(() => reject(new RangeCancelledError()), false);
      const onMessage = (m: ThreadMessage): void => {
        if (m.type === 'progress') onProgress(m.done);
        else if (m.type === 'done') settle(() => resolve(m.bytes), true);
        else settle(() => reject(new Error(m.message)), false);
      };
      const onError = (e: Error): void => settle(() => reject(e), false);
      const onExit = (code: number): void => settle(() => reject(new Error(`the thread exited with code ${code} before finishing`)), false);
      signal.addEventListener('abort', onAbort, { once: true });
      worker.on('message', onMessage);
      worker.on('error', onError);
      worker.on('exit', onExit);
      try {
        worker.postMessage({ type: 'range', request, solution: shipPlan ? plan.solution : undefined } satisfies RangeMessage);
      } catch (e) {
        settle(() => reject(e), false);
      }
    });

/**
 * Computes a range on this thread from the plan already made here (nothing validated or planned
 * again), then the report's plan-only part while the other threads finish, after letting the other ranges' threads start (the draws run synchronously and would
 * hold them back). It cannot be interrupted; a cancel is noticed when it ends.
 */
const computeHere: RangeExecutor = async (request, { signal, onProgress, plan, inputDigest }) => {
  await new Promise((resolve) => setTimeout(resolve, 0));
  if (signal.aborted) throw new RangeCancelledError();
  const bytes = await computeRange(request, { onProgress, planned: { plan, inputDigest } });
  if (signal.aborted) throw new RangeCancelledError();
  // This thread would now wait for the worker threads' ranges: the report's plan-only part
  // (forecast sensitivity) is computed in that time instead of after the merge.
  planForecastSensitivity(plan);
  return bytes;
};

/**
 * Splits the draws over `threads` threads (this one and threads − 1 worker threads), one contiguous
 * range each, merged into the same report as one loop (meta.threads records the split). With
 * `automatic` (no --threads given), small requests stay on this thread. `pool`: threads to reuse
 * (kept warm across requests by a long-lived caller).
 */
export function threadRunner(threads: number, automatic: boolean, entry?: URL, pool: RangeThreadPool = new RangeThreadPool(entry)): DrawRunner {
  // Asked for explicitly, the threads start now: their start-up overlaps reading, validating and
  // planning here. The automatic choice waits for the plan's estimated work (small requests stay here).
  if (!automatic) pool.prestart(threads - 1);
  const onThread = threadExecutor(pool);
  return fanOutRunner({
    parts: automatic ? (plan) => (plan.workUnits < (entry ? AUTO_THREADS_MIN_WORK : automaticMinWork()) ? 'here' : threads) : threads,
    // The first range runs on this thread (one thread start, module load and JIT warm-up fewer);
    // its retry, if any, on a worker thread.
    execute: (request, context) => (context.range.index === 0 && context.attempt === 1 ? computeHere(request, context) : onThread(request, context)),
    unit: 'thread',
  });
}
