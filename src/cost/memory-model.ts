import { ChannelVarianceAccumulator } from '../statistics/channel-variance.js';
import { storedValues } from '../statistics/weight-accumulator.js';
import type { Job, RequestShape } from './request-shape.js';
import { EXACT_EIGENVALUE_MAX_N } from './work-model.js';

/**
 * Peak memory of a request, in bytes, from its shape: the caller's numbers (JSON text, parsed
 * arrays, validated copies, typed arrays), the N×N matrices and workspaces live at once, the
 * eigendecomposition's copies, the stored draws and accumulators, and the response (object and
 * JSON text). Refused above LIMITS.maxMemoryBytes (413) before anything is allocated. The
 * constants were checked against measured heap + ArrayBuffer peaks (`npm run bench:limits`,
 * test/cost/memory-limit.test.ts); DEVELOPERS.md, "Request cost", has the numbers.
 */

const DOUBLE = 8;
/** JSON text (~12 characters a number), the parsed array, zod's copy, a Float64Array copy and their garbage (measured ~70 B). */
export const BYTES_PER_INPUT_NUMBER = 72;
/** Response numbers per asset and method (weight bands, means, errors, channel shares, risk shares…). */
export const RESPONSE_NUMBERS_PER_ASSET_METHOD = 24;
/** Characters a number takes in the JSON response (17 significant digits, sign, exponent, comma). */
export const RESPONSE_CHARS_PER_NUMBER = 22;
/** How many times each asset id appears in a report (assets list, per-method weight rows, risk shares…). */
export const ID_REPEATS_IN_RESPONSE = 12;
/** Runtime, code, fixed-size objects and not-yet-collected garbage of one request (measured: 15–25 MB on small shapes). */
export const FIXED_BYTES = 24 * 1024 * 1024;

export interface MemoryBreakdown {
  readonly inputs: number;
  readonly matrices: number;
  readonly groups: number;
  readonly stored: number;
  readonly response: number;
  readonly total: number;
}

function isDense(s: RequestShape): boolean {
  return s.inputKind === 'dense-moments' || (s.inputKind === 'history' && s.factorModel === 'none');
}

/** Estimated response size in bytes (JSON text). */
export function responseBytes(job: Job, s: RequestShape): number {
  const methods = s.methods.length;
  const perAsset = job === 'optimize' ? 6 * methods : RESPONSE_NUMBERS_PER_ASSET_METHOD * (methods + 1);
  return 20_000 + s.n * perAsset * RESPONSE_CHARS_PER_NUMBER + ID_REPEATS_IN_RESPONSE * (s.assetIdChars + 4 * s.n) + 200 * s.groups;
}

/**
 * Peak bytes of a request. `check` with a baseline proposal keeps both runs (their per-draw data
 * pair up for the gate's errors), so the baseline's matrices and stored draws add to the candidate's.
 */
export function requestMemory(job: Job, s: RequestShape, baseline?: RequestShape): number {
  const own = memoryBreakdown(job, s).total;
  if (job !== 'check' || !baseline) return own;
  const other = memoryBreakdown(job, baseline);
  return own + other.total - FIXED_BYTES - other.response;
}

export function memoryBreakdown(job: Job, s: RequestShape): MemoryBreakdown {
  const n = s.n;
  const nn = n * n * DOUBLE;
  const inputs = BYTES_PER_INPUT_NUMBER * s.inputNumbers;
  // Validation's PSD test holds the matrix and a factor (and, for a small non-PSD one, an
  // eigendecomposition); it is over before the run's own matrices exist.
  const validationMatrices = s.inputKind === 'dense-moments' ? nn * (2 + (n <= EXACT_EIGENVALUE_MAX_N ? 5 : 0)) : 0;
  if (job === 'validate') {
    const total = FIXED_BYTES + inputs + validationMatrices;
    return { inputs, matrices: validationMatrices, groups: 0, stored: 0, response: 0, total };
  }
  const qpMethods = s.methods.filter((m) => m.name === 'mean-variance' || m.name === 'minimum-variance' || m.name === 'kelly').length + 1;
  let matrices = 0;
  if (isDense(s)) {
    // Base Σ, the draw's Σ, each QP method's reduced-Hessian factor and buffer, the parametric factor and Wishart scratch.
    matrices += nn * (2 + 2 * qpMethods + (s.scheme === 'parametric' && job !== 'optimize' ? 2 : 0));
    if (s.methods.some((m) => m.name === 'risk-parity')) matrices += nn;
  } else {
    matrices += n * (s.factors + 2) * DOUBLE * (4 + 2 * qpMethods) + s.factors * s.factors * DOUBLE * 8;
  }
  // An eigendecomposition (repair, PCA) keeps ~5 N×N copies while it runs.
  if (s.repair || s.factorModel === 'pca') matrices += 5 * nn;
  matrices = Math.max(matrices, validationMatrices);
  if (s.inputKind === 'history') {
    // The history as a typed array, its row-major copy, and for scenario Kelly three channel scenario sets and the base.
    matrices += s.rows * n * DOUBLE * (2 + (s.scenarioKelly ? 4 : 0));
  }
  // Group rows: each QP workspace keeps the rows dense (G+1)·N and its Schur vectors (G+1)·N; the
  // feasibility phase has its own engine over N + 2G variables.
  const groups = s.groups === 0 ? 0 : (s.groups + 1) * DOUBLE * (2 * n * qpMethods + 2 * (n + 2 * s.groups)) + 12 * s.groupMemberships;
  let stored = 0;
  if (job === 'stress' || job === 'check') {
    const d = s.draws;
    stored += DOUBLE * storedValues(d, n) * (s.methods.length + 1);
    // Every method keeps its channel accumulator (channel variances of the weights), whether or not it reads the means.
    stored += DOUBLE * s.methods.length * ChannelVarianceAccumulator.storedValues(d, n);
    stored += (s.methods.length * 4 + 3) * d * (DOUBLE + 1);
  }
  const response = 2 * responseBytes(job, s);
  const total = FIXED_BYTES + inputs + matrices + groups + stored + response;
  return { inputs, matrices, groups, stored, response, total };
}
