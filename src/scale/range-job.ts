import { z } from 'zod';
import { LIMITS } from '../schema/limits.js';
import { validateProposal } from '../schema/validate.js';
import type { Problem } from '../schema/problems.js';
import { inputDigest } from '../stress/digest.js';
import { createAccumulators, planStress, runDraws, type PlanSolution, type StressAccumulators, type StressPlan, type WorkLimits } from '../stress/engine.js';
import { RangeCancelledError } from './errors.js';
import { encodePartial } from './wire.js';

/**
 * One range of a request's draws, as sent to a thread, a Durable Object or
 * `POST /v1/stress/range`: the proposal, the request's total draws and seed (fixed by whoever
 * splits the work, so every range sees the same plan), and the range [start, end).
 */
export const RangeRequestSchema = z
  .strictObject({
    proposal: z.unknown().describe('The proposal, exactly as validated by the caller (its digest must match).'),
    draws: z.int().min(1).max(LIMITS.maxDraws).describe('Draws of the whole request (B).'),
    seed: z.union([z.string(), z.int()]).describe('Seed of the whole request.'),
    start: z.int().min(0).describe('First draw index of the range.'),
    end: z.int().min(1).describe('One past the last draw index of the range.'),
  })
  .refine((r) => r.start < r.end && r.end <= r.draws, { message: 'need 0 ≤ start < end ≤ draws', path: ['end'] })
  .describe('One range of draws of a stress request; the answer is a partial result (application/vnd.wobble.partial).');
export type RangeRequest = z.infer<typeof RangeRequestSchema>;

/** The proposal inside a range request is invalid (answered 400/422 with its problems). */
export class RangeProposalError extends Error {
  constructor(readonly problems: Problem[]) {
    super('the proposal in the range request is invalid');
    this.name = 'RangeProposalError';
  }
}

/**
 * Work a range may do: the single-request limit. A range of r of B draws is allowed when its share
 * r/B of the whole request's estimated work fits, i.e. the whole request's work ≤ limit · B/r.
 */
export function rangeWorkShares(request: { draws: number; start: number; end: number }): number {
  return request.draws / (request.end - request.start);
}

export interface RangeComputeOptions {
  /** Limits the deployment lowers (WOBBLE_MAX_WORK); each range is held to them for its share. */
  readonly limits?: WorkLimits;
  /** Lets other events run between chunks of draws (a Durable Object hears a cancel message there). */
  readonly pause?: () => Promise<void>;
  /** Checked between chunks; true stops the range with RangeCancelledError. */
  readonly cancelled?: () => boolean;
  /** Draws finished so far in this range. */
  readonly onProgress?: (done: number) => void;
  /**
   * The plan of the whole request, already made on this thread (with the proposal's input digest):
   * nothing is validated or planned again.
   */
  readonly planned?: { readonly plan: StressPlan; readonly inputDigest: string };
  /**
   * The solution of the caller's plan (another thread's): the proposal is validated, prepared and
   * priced here, but the base optima, block length and reference are taken, not solved again.
   */
  readonly solution?: PlanSolution;
}

/**
 * Draws per chunk between pauses: about 2e8 work units (a fifth of a second), but at least 10
 * draws (each chunk re-allocates the per-range draw buffers, up to N² doubles) and at most 50
 * (the work estimate under-counts fixed per-draw costs of small problems).
 */
function chunkDraws(workPerDraw: number): number {
  return Math.min(50, Math.max(10, Math.floor(2e8 / Math.max(workPerDraw, 1))));
}

/** The plan of a range's request: the caller's own, one made from the caller's solution, or a fresh one. */
async function rangePlan(request: RangeRequest, options: RangeComputeOptions): Promise<{ plan: StressPlan; inputDigest: string }> {
  if (options.planned) {
    const { plan } = options.planned;
    if (plan.draws !== request.draws || plan.seed !== request.seed) throw new RangeError('the plan handed to the range is for another request');
    return options.planned;
  }
  const validation = validateProposal(request.proposal);
  if (!validation.ok) throw new RangeProposalError(validation.problems);
  const overrides = { draws: request.draws, seed: request.seed, maxWork: options.limits?.maxWork, workShares: rangeWorkShares(request) };
  const plan = planStress(validation.proposal, validation.warnings, overrides, options.solution);
  return { plan, inputDigest: await inputDigest(validation.proposal) };
}

/**
 * Computes the draws [start, end) of a request and returns the binary partial result. Without a
 * plan or solution handed over, the plan (base optima, block length) is recomputed here from the
 * proposal: it is deterministic, so every range sees the plan of a single run. Throws
 * RangeProposalError, LimitError (413) and the core's typed errors like a whole request would.
 */
/**
 * Computes draws [start, end) of a plan made on this thread, in one synchronous run, and returns
 * their binary partial (a thread's chunk: the draws are not interruptible inside it).
 */
export function computePlannedRange(plan: StressPlan, inputDigest: string, range: { readonly start: number; readonly end: number }, onProgress?: (done: number) => void): Uint8Array {
  const acc = createAccumulators(plan, range);
  runDraws(plan, range.start, range.end, acc, onProgress);
  return encodePartial(plan, acc, range, inputDigest);
}

export async function computeRange(request: RangeRequest, options: RangeComputeOptions = {}): Promise<Uint8Array> {
  const { plan, inputDigest: digest } = await rangePlan(request, options);
  const acc = createAccumulators(plan, { start: request.start, end: request.end });
  await runDrawsInChunks(plan, acc, request, options);
  return encodePartial(plan, acc, request, digest);
}

/**
 * Computes draws [start, end) into `acc`: in one go without `pause`, else in chunks of about a
 * fifth of a second with a pause between them, stopping with RangeCancelledError ("cancelled after
 * X of Y draws") at the first pause where `cancelled` says so. The pauses are what let a runtime
 * deliver a disconnect or a cancel message while draws are being computed.
 */
export async function runDrawsInChunks(
  plan: StressPlan,
  acc: StressAccumulators,
  range: { readonly start: number; readonly end: number },
  options: Pick<RangeComputeOptions, 'pause' | 'cancelled' | 'onProgress'> = {},
): Promise<void> {
  const chunk = options.pause ? chunkDraws(plan.workUnits / plan.draws) : range.end - range.start;
  for (let from = range.start; from < range.end; from += chunk) {
    if (options.cancelled?.()) throw new RangeCancelledError(`cancelled after ${from - range.start} of ${range.end - range.start} draws`);
    const to = Math.min(range.end, from + chunk);
    const done = from - range.start;
    runDraws(plan, from, to, acc, options.onProgress ? (d) => options.onProgress?.(done + d) : undefined);
    if (options.pause && to < range.end) await options.pause();
  }
  if (options.cancelled?.()) throw new RangeCancelledError('cancelled');
}
