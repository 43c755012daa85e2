import type { Proposal } from '../schema/proposal.js';
import { inputDigest } from '../stress/digest.js';
import { createAccumulators, runDraws, type StressAccumulators, type StressPlan } from '../stress/engine.js';
import type { DrawRunner } from '../stress/run.js';
import { fanOut } from './fan-out.js';
import { runDrawsInChunks, type RangeRequest } from './range-job.js';
import { splitDraws, type DrawRange } from './ranges.js';

/** What an executor knows about the range it computes. */
export interface RangeContext {
  readonly range: DrawRange;
  readonly attempt: number;
  readonly signal: AbortSignal;
  readonly onProgress: (done: number) => void;
  /**
   * The request's plan, made by the caller, and the proposal's input digest: an executor on the
   * same thread computes from it directly, one on another thread may send plan.solution along.
   * Remote executors ignore it (the service plans for itself).
   */
  readonly plan: StressPlan;
  readonly inputDigest: string;
}

/** Where and how one range is computed: a worker thread, a Durable Object, a remote service. */
export type RangeExecutor = (request: RangeRequest, context: RangeContext) => Promise<Uint8Array>;

export interface FanOutRunnerOptions {
  /**
   * Ranges to split the draws into (at most one per draw), or a choice made from the plan's
   * estimated work: 'here' computes the draws in this loop, unsplit (nothing recorded in meta).
   */
  readonly parts: number | ((plan: StressPlan) => number | 'here');
  readonly execute: RangeExecutor;
  /** 'thread' records meta.threads, 'shard' meta.shards. */
  readonly unit: 'thread' | 'shard';
  /** CPU allowances the work is spread over (default 1: the single-request work limit holds). */
  readonly workShares?: number;
  readonly signal?: AbortSignal;
  readonly retries?: number;
  /**
   * When the draws stay here ('here'): pause between chunks of draws and stop once `signal`
   * aborts (see interruptibleRunner). Without it they run in one synchronous loop.
   */
  readonly pause?: () => Promise<void>;
}

/**
 * A DrawRunner (src/stress/run.ts) that splits the draws into ranges, computes them through
 * `execute` and merges the partials: the one code path behind CLI threads, the CLI's remote
 * shards and the Worker's Durable Object shards.
 */
export function fanOutRunner(options: FanOutRunnerOptions): DrawRunner & { record: { threads?: number; shards?: number } } {
  const runner = {
    record: {} as { threads?: number; shards?: number },
    workShares: options.workShares,
    async run(plan: StressPlan, proposal: Proposal, onProgress?: (done: number, total: number) => void) {
      const chosen = typeof options.parts === 'number' ? options.parts : options.parts(plan);
      if (chosen === 'here') {
        runner.record = {};
        if (options.pause && options.signal) return interruptibleRunner(options.signal, options.pause).run(plan, proposal, onProgress);
        return drawsHere(plan, onProgress);
      }
      const parts = Math.min(chosen, plan.draws);
      runner.record = options.unit === 'thread' ? { threads: parts } : { shards: parts };
      const digest = await inputDigest(proposal);
      return fanOut(
        plan,
        digest,
        splitDraws(plan.draws, parts),
        (range, attempt, signal, progress) =>
          options.execute({ proposal, draws: plan.draws, seed: plan.seed, start: range.start, end: range.end }, { range, attempt, signal, onProgress: progress, plan, inputDigest: digest }),
        { signal: options.signal, retries: options.retries, unit: options.unit, onProgress },
      );
    },
  };
  return runner;
}

/**
 * A DrawRunner that computes every draw on this thread, in chunks of about a fifth of a second with
 * `pause` between them, and stops with RangeCancelledError ("cancelled after X of B draws") at the
 * first pause after `signal` aborts — e.g. the HTTP request's signal when its client goes away, so
 * an unsharded request does not run on to its end for nobody. Same accumulators as one loop;
 * records nothing in meta.
 */
export function interruptibleRunner(signal: AbortSignal, pause: () => Promise<void>): DrawRunner {
  return {
    record: {},
    async run(plan, _proposal, onProgress) {
      const acc = createAccumulators(plan);
      await runDrawsInChunks(plan, acc, { start: 0, end: plan.draws }, {
        pause,
        cancelled: () => signal.aborted,
        onProgress: onProgress ? (done) => onProgress(done, plan.draws) : undefined,
      });
      return acc;
    },
  };
}

/** Every draw of the plan in one loop on this thread (what a runner does when it splits nothing). */
export function drawsHere(plan: StressPlan, onProgress?: (done: number, total: number) => void): StressAccumulators {
  const acc = createAccumulators(plan);
  runDraws(plan, 0, plan.draws, acc, onProgress ? (done) => onProgress(done, plan.draws) : undefined);
  return acc;
}
