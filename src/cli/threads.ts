import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { FINEST_CHUNK_PER_LANE, laneChunks } from '../scale/chunk-claims.js';
import { runLanes, type Lane } from '../scale/lanes.js';
import { drawsHere } from '../scale/runner.js';
import { computePlannedRange } from '../scale/range-job.js';
import type { DrawRange } from '../scale/ranges.js';
import type { Proposal } from '../schema/proposal.js';
import { inputDigest } from '../stress/digest.js';
import type { StressPlan } from '../stress/engine.js';
import { planForecastSensitivity } from '../stress/plan-summary.js';
import type { DrawRunner } from '../stress/run.js';
import type { ChunkJobMessage, ThreadMessage } from './range-thread.js';

/** Default --threads: the cores Node may use, at most this many (more threads than cores only add start-up and memory). */
export const MAX_DEFAULT_THREADS = 8;

/**
 * Below this estimated work the default splits nothing: starting a thread (module load, JIT
 * warm-up of a cold thread: about 0.4 s wall on the 2-core development machine) costs more than it
 * saves. Measured with `npm run bench:scale` (fresh CLI processes on the built package, best of
 * 5, quiet machine): the 30-asset, six-method, 1500-draw history, priced 7.7e9 units, took 2.44 s
 * with --threads 1 and 2.09 s with --threads 2; the demo at 500 draws, priced 1.4e9, is faster on
 * one thread. So the default splits from 5e9 units (a couple of seconds of one core). From TypeScript sources every
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
  /** Threads that have finished a job (their code is compiled). */
  private readonly warm = new WeakSet<Worker>();

  /** `entry` overrides the thread's module (e.g. a bundled range-thread for benchmarks). */
  constructor(private readonly entry?: URL) {}

  /** Starts threads until `count` are idle, so their start-up overlaps this thread's work. */
  prestart(count: number): void {
    while (this.idle.length < count) this.idle.push(this.spawn());
  }

  get idleThreads(): number {
    return this.idle.length;
  }

  /** Idle threads that have finished a job before (modules loaded and hot code compiled). */
  get warmIdleThreads(): number {
    return this.idle.filter((w) => this.warm.has(w)).length;
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

  /** Returns a thread that finished its job cleanly (it is warm from now on). */
  release(worker: Worker): void {
    worker.unref();
    this.warm.add(worker);
    this.idle.push(worker);
  }

  /** Stops the idle threads. */
  async close(): Promise<void> {
    await Promise.all(this.idle.splice(0).map((w) => w.terminate()));
  }
}

/** Lets queued events run (worker threads' partials are merged there) before this thread computes its next chunk. */
const nextTurn = (): Promise<void> => new Promise((resolve) => setImmediate(resolve));

/**
 * This thread as a lane: it claims chunks like the worker threads, computing each from the plan
 * already made here (nothing validated or planned again), and yields between chunks so the worker
 * threads' partials are merged as they arrive. It stops claiming when the request is cancelled
 * (within one chunk). When no chunk is left it computes the report's plan-only part (forecast
 * sensitivity) while the worker threads finish theirs.
 */
const hereLane =
  (plan: StressPlan, digest: string): Lane =>
  async ({ claims, chunks, deliver, progress, signal }) => {
    for (;;) {
      await nextTurn();
      if (signal.aborted) return {};
      const k = claims.claim();
      if (k === undefined) break;
      deliver(k, computePlannedRange(plan, digest, chunks[k], progress));
    }
    planForecastSensitivity(plan);
    return {};
  };

/**
 * A pooled worker thread as a lane: it is sent the validated proposal and the plan's solution
 * once, then claims chunks by itself (src/cli/range-thread.ts). A thread that finishes cleanly
 * goes back to the pool; a cancelled or failed one is terminated (how a thread is stopped at once).
 */
const workerLane =
  (pool: RangeThreadPool, job: Omit<ChunkJobMessage, 'type' | 'claims' | 'chunks'>): Lane =>
  ({ claims, chunks, deliver, progress, signal }) =>
    new Promise((resolve) => {
      if (signal.aborted) return resolve({});
      const worker = pool.acquire();
      let settled = false;
      const settle = (failure: string | undefined, reuse: boolean): void => {
        if (settled) return;
        settled = true;
        signal.removeEventListener('abort', onAbort);
        worker.off('message', onMessage);
        worker.off('error', onError);
        worker.off('exit', onExit);
        if (reuse) pool.release(worker);
        else void worker.terminate();
        resolve(failure === undefined ? {} : { failure });
      };
      const onAbort = (): void => settle(undefined, false);
      const onMessage = (m: ThreadMessage): void => {
        if (m.type === 'progress') progress(m.done);
        else if (m.type === 'chunk') deliver(m.index, m.bytes);
        else if (m.type === 'finished') settle(undefined, true);
        else settle(`a worker thread failed: ${m.message}`, false);
      };
      const onError = (e: Error): void => settle(`a worker thread failed: ${e.message}`, false);
      const onExit = (code: number): void => settle(`a worker thread exited with code ${code} before finishing`, false);
      signal.addEventListener('abort', onAbort, { once: true });
      worker.on('message', onMessage);
      worker.on('error', onError);
      worker.on('exit', onExit);
      try {
        worker.postMessage({ ...job, type: 'chunks', chunks, claims: claims.buffer as SharedArrayBuffer } satisfies ChunkJobMessage);
      } catch (e) {
        settle(`could not start a worker thread's chunks: ${e instanceof Error ? e.message : String(e)}`, false);
      }
    });

/** Computes a chunk again on this thread (a chunk a failed lane left behind). */
const retryHere =
  (plan: StressPlan, digest: string) =>
  async (chunk: DrawRange): Promise<Uint8Array> =>
    computePlannedRange(plan, digest, chunk);

export interface ThreadRunnerOptions {
  /** The worker-thread module (e.g. a bundled range-thread for benchmarks). */
  readonly entry?: URL;
  /** Threads to reuse (kept warm across requests by a long-lived caller). */
  readonly pool?: RangeThreadPool;
  /**
   * Finest chunk as a fraction of a thread's share (1: one contiguous range per thread). Default:
   * FINEST_CHUNK_PER_LANE when every worker thread needed is warm, else 1 (see threadRunner).
   */
  readonly finestChunk?: number;
  readonly signal?: AbortSignal;
}

/**
 * Splits the draws over `threads` threads (this one and threads − 1 worker threads), which claim
 * chunks of the draws as they become free (src/scale/chunk-claims.ts); the partials merge into the
 * same report as one loop (meta.threads records the split). With `automatic` (no --threads
 * given), small requests stay on this thread.
 */
export function threadRunner(threads: number, automatic: boolean, options: ThreadRunnerOptions = {}): DrawRunner {
  const pool = options.pool ?? new RangeThreadPool(options.entry);
  // Asked for explicitly, the threads start now: their start-up overlaps reading, validating and
  // planning here. The automatic choice waits for the plan's estimated work (small requests stay here).
  if (!automatic) pool.prestart(threads - 1);
  const minWork = options.entry ? AUTO_THREADS_MIN_WORK : automaticMinWork();
  const runner = {
    record: {} as { threads?: number },
    async run(plan: StressPlan, proposal: Proposal, onProgress?: (done: number, total: number) => void) {
      if (automatic && plan.workUnits < minWork) {
        runner.record = {};
        return drawsHere(plan, onProgress);
      }
      const lanes = Math.min(threads, plan.draws);
      runner.record = { threads: lanes };
      const digest = await inputDigest(proposal);
      // Measured with `npm run bench:scale` (30 assets, 1500 draws, 2 threads on 2 cores): warm
      // threads finish together on chunks down to 1/32 of a share (best of 5 taking turns, quiet
      // machine: 1.01 s against 1.08 s with one range each), but a thread that has
      // not yet compiled its code runs its second and later chunks much slower (their first draws
      // run as if cold again, a few hundred ms per thread lost), so in a fresh process one
      // contiguous range per thread is faster (2.40–2.56 s against 2.72–2.90 s). Cold threads
      // therefore get one range each; they still claim it, so a failed thread's range is computed
      // again here.
      const warm = pool.warmIdleThreads >= lanes - 1;
      const chunks = laneChunks(plan.draws, lanes, options.finestChunk ?? (warm ? FINEST_CHUNK_PER_LANE : 1));
      const job = { proposal, draws: plan.draws, seed: plan.seed, inputDigest: digest, solution: plan.solution };
      const all: Lane[] = [hereLane(plan, digest)];
      for (let k = 1; k < lanes; k++) all.push(workerLane(pool, job));
      return runLanes(plan, digest, chunks, all, retryHere(plan, digest), { signal: options.signal, onProgress });
    },
  };
  return runner;
}
