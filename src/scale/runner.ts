import type { Proposal } from '../schema/proposal.js';
import { inputDigest } from '../stress/digest.js';
import { createAccumulators, runDraws, type StressPlan } from '../stress/engine.js';
import type { DrawRunner } from '../stress/run.js';
import { fanOut } from './fan-out.js';
import type { RangeRequest } from './range-job.js';
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
        const acc = createAccumulators(plan);
        runDraws(plan, 0, plan.draws, acc, onProgress ? (done) => onProgress(done, plan.draws) : undefined);
        return acc;
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
