import { problemDetails, summarise } from '../http/problem.js';
import { WobbleProblemError } from '../problem-error.js';
import { CheckRequestSchema } from '../schema/check.js';
import { problem, problemsFromZod, statusFor, type Problem } from '../schema/problems.js';
import type { Policy } from '../schema/proposal.js';
import type { OptimizeResponse, Report } from '../schema/report.js';
import { validateProposal, type ValidationContext, type Warning } from '../schema/validate.js';
import { resolveBaseline } from '../stress/baseline.js';
import { classifyError } from '../stress/errors.js';
import { checkProposal, optimizeProposal, stressProposal, type Baseline } from '../stress/run.js';

/**
 * The library's three jobs: the same steps as POST /v1/optimize, /v1/stress and /v1/check
 * (validate the JSON, run the core, map typed failures to 400/413/422), returning the same JSON.
 * Where the service answers with problem+json, these throw a WobbleProblemError with the same
 * status and `errors[]`. No I/O: runs in Node, browsers and Workers.
 */

export interface StressOptions {
  /** Overrides the proposal's resampling.draws. */
  readonly draws?: number;
  /** Overrides the proposal's resampling.seed. */
  readonly seed?: string | number;
  /** Called as draws complete (done, total). */
  readonly onProgress?: (done: number, total: number) => void;
}

/** The body of POST /v1/check: the proposal, the policy (default: proposal.policy), an optional baseline proposal or report. */
export interface CheckRequest {
  readonly proposal: unknown;
  readonly policy?: unknown;
  readonly baseline?: unknown;
}

/** Milliseconds for meta.elapsedMs only (never used to bound work), as the HTTP edge does. */
const clock = (): number => Date.now();

function invalid(problems: readonly Problem[]): WobbleProblemError {
  return new WobbleProblemError(problemDetails(statusFor(problems), summarise(problems), { errors: problems }));
}

function validated(input: unknown, context: ValidationContext): { proposal: Extract<ReturnType<typeof validateProposal>, { ok: true }>['proposal']; warnings: Warning[] } {
  const validation = validateProposal(input, context);
  if (!validation.ok) throw invalid(validation.problems);
  return { proposal: validation.proposal, warnings: validation.warnings };
}

/** Typed failures of the core (limits, unsolvable inputs, policy problems) become 413/422 errors; anything else is a bug and propagates. */
async function answered<T>(run: () => Promise<T>): Promise<T> {
  try {
    return await run();
  } catch (e) {
    const known = classifyError(e);
    if (!known) throw e;
    const errors = known.path ? [problem(known.path, known.detail, known.status === 413 ? 'limit' : 'unsolvable')] : undefined;
    throw new WobbleProblemError(problemDetails(known.status, known.detail, errors ? { errors } : {}));
  }
}

/** Every requested method's optimum on the unperturbed inputs (POST /v1/optimize). */
export async function optimize(proposal: unknown): Promise<OptimizeResponse> {
  const { proposal: p, warnings } = validated(proposal, { job: 'optimize' });
  return answered(() => optimizeProposal(p, warnings, clock));
}

/** The robustness report (POST /v1/stress). */
export async function stress(proposal: unknown, options: StressOptions = {}): Promise<Report> {
  const { proposal: p, warnings } = validated(proposal, { job: 'stress', draws: options.draws });
  return answered(() => stressProposal(p, warnings, { ...options, clock }));
}

/** The report with its verdict against the policy (POST /v1/check); a failed gate is `verdict.pass === false`, not an error. */
export async function check(request: CheckRequest, options: StressOptions = {}): Promise<Report> {
  const envelope = CheckRequestSchema.safeParse(request);
  if (!envelope.success) throw invalid(problemsFromZod(envelope.error.issues));
  const validation = validateProposal(envelope.data.proposal, { job: 'check', draws: options.draws });
  if (!validation.ok) throw invalid(validation.problems.map((p) => ({ ...p, path: p.path ? `proposal.${p.path}` : 'proposal', pointer: `/proposal${p.pointer}` })));
  const policy: Policy | undefined = envelope.data.policy ?? validation.proposal.policy;
  if (!policy) throw invalid([problem(['policy'], 'required field missing: a policy here or in proposal.policy')]);
  let baseline: Baseline | undefined;
  if (envelope.data.baseline !== undefined) {
    const resolved = resolveBaseline(envelope.data.baseline);
    if (!resolved.ok) throw invalid(resolved.problems);
    baseline = resolved.baseline;
  }
  return answered(() => checkProposal(validation.proposal, validation.warnings, policy, baseline, { ...options, clock }));
}
