import { EstimationError } from '../estimate/errors.js';
import { OptimizationError } from '../optimize/types.js';
import { LimitError, TooManyFailuresError } from './engine.js';
import { PolicyError } from './verdict.js';

/**
 * How a failure of the core maps to what a caller is told: 413 for a service limit, 422 for a
 * request that is valid but has no answer. Anything else is a bug (undefined here).
 */
export function classifyError(e: unknown): { status: 413 | 422; detail: string; path?: (string | number)[] } | undefined {
  if (e instanceof LimitError) return { status: 413, detail: e.message };
  if (e instanceof OptimizationError) return { status: 422, detail: `${e.code}: ${e.message}` };
  if (e instanceof EstimationError) return { status: 422, detail: `the inputs cannot be estimated: ${e.message}` };
  if (e instanceof TooManyFailuresError) return { status: 422, detail: e.message };
  if (e instanceof PolicyError) return { status: 422, detail: e.message, path: e.path };
  // Numerical preconditions checked deep in the core (e.g. a covariance that passed validation's
  // PSD tolerance but cannot be factorised for sampling) are about the inputs, not a bug.
  if (e instanceof RangeError) return { status: 422, detail: `the inputs cannot be used numerically: ${e.message}` };
  return undefined;
}
