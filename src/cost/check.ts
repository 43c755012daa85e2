import { LIMITS } from '../schema/limits.js';
import { requestMemory, responseBytes } from './memory-model.js';
import type { Job, RequestShape } from './request-shape.js';
import { requestWork } from './work-model.js';

/** Options every edge may pass: a lower work maximum than LIMITS.maxWorkUnits (e.g. an operator's WOBBLE_MAX_WORK). */
export interface CostOptions {
  /** Largest work in counted units this deployment accepts; values above LIMITS.maxWorkUnits are capped to it. */
  readonly maxWork?: number;
  /**
   * CPU allowances the draws are split over (shards, src/scale), each held to the work maximum, so
   * the whole request may do this many times the work (default 1; never lowers the maximum).
   */
  readonly workShares?: number;
}

export interface CostVerdict {
  readonly work: number;
  readonly bytes: number;
  readonly responseBytes: number;
  /** The first limit the request is over, with what to change; undefined when it fits. */
  readonly over?: { readonly limit: 'maxWorkUnits' | 'maxMemoryBytes' | 'maxResponseBytes'; readonly value: number; readonly message: string };
}

/** The work maximum in force: the caller's lower maximum when given (and valid), else LIMITS.maxWorkUnits. */
export function effectiveMaxWork(options: CostOptions = {}): number {
  const m = options.maxWork;
  return m !== undefined && Number.isFinite(m) && m > 0 ? Math.min(m, LIMITS.maxWorkUnits) : LIMITS.maxWorkUnits;
}

const mb = (bytes: number): string => `${(bytes / 1024 / 1024).toFixed(1)} MB`;

/** Prices a request against the work, memory and response limits. Pure and cheap (no matrix is touched). */
export function priceRequest(job: Job, shape: RequestShape, options: CostOptions & { baseline?: RequestShape } = {}): CostVerdict {
  const work = requestWork(job, shape, options.baseline);
  const bytes = requestMemory(job, shape, options.baseline);
  const response = job === 'validate' ? 0 : responseBytes(job, shape);
  const lowered = effectiveMaxWork(options) < LIMITS.maxWorkUnits;
  const maxWork = effectiveMaxWork(options) * Math.max(1, options.workShares ?? 1);
  const verdict = { work, bytes, responseBytes: response };
  const draws = job === 'stress' || job === 'check';
  if (work > maxWork) {
    const fewer = draws ? `use fewer draws (the draws are most of it: ${shape.draws} now), ` : '';
    return {
      ...verdict,
      over: {
        limit: 'maxWorkUnits',
        value: maxWork,
        message: `this request needs about ${work.toExponential(2)} units of work, over the limit of ${maxWork.toExponential(1)} (maxWorkUnits${lowered ? ', lowered on this deployment' : ''}); ${fewer}fewer methods in compare, fewer assets or groups, or a factor model`,
      },
    };
  }
  if (bytes > LIMITS.maxMemoryBytes) {
    return {
      ...verdict,
      over: {
        limit: 'maxMemoryBytes',
        value: LIMITS.maxMemoryBytes,
        message: `this request would need about ${mb(bytes)} of memory, over the limit of ${mb(LIMITS.maxMemoryBytes)} (maxMemoryBytes); ${draws ? 'use fewer draws, ' : ''}fewer methods in compare, fewer assets, or a factor model instead of a dense covariance`,
      },
    };
  }
  if (response > LIMITS.maxResponseBytes) {
    return {
      ...verdict,
      over: {
        limit: 'maxResponseBytes',
        value: LIMITS.maxResponseBytes,
        message: `the response would be about ${mb(response)}, over the limit of ${mb(LIMITS.maxResponseBytes)} (maxResponseBytes); use fewer methods in compare or fewer assets`,
      },
    };
  }
  return verdict;
}
