import type { MethodName, Policy, PolicyRule, Proposal } from '../schema/proposal.js';
import type { OptimizeResponse, Report } from '../schema/report.js';
import type { Warning } from '../schema/validate.js';
import { CAUTIONS } from '../schema/cautions.js';
import { VERSION } from '../version.js';
import { describeOptimum } from './base-optimum.js';
import { inputDigest } from './digest.js';
import { forecastSensitivityTables } from './forecast-sensitivity.js';
import { checkLimits, createAccumulators, effectiveMaxWorkUnits, mergeAccumulators, planStress, runDraws, solveBaseOptima, TooManyFailuresError, type StressAccumulators, type StressPlan, type WorkLimits } from './engine.js';
import { methodList, prepareProblem } from './problem.js';
import { buildReport } from './report.js';
import { pairedStdErr, type StressRun } from './paired.js';
import { judge } from './verdict.js';

/**
 * The three jobs of the service, on a validated proposal. Pure apart from WebCrypto for the digest;
 * the edges (HTTP, CLI) measure elapsed time and pass it in through `clock`.
 */

export interface RunOptions {
  readonly draws?: number;
  readonly seed?: string | number;
  /** Split the draws into ranges computed one after another and merged (for tests of split-invariance, and progress). */
  readonly rangeSize?: number;
  readonly onProgress?: (done: number, total: number) => void;
  /** Milliseconds since some origin; only used for meta.elapsedMs. */
  readonly clock?: () => number;
  /** Limits the deployment lowers (WOBBLE_MAX_WORK on the service); the built-in limits otherwise. */
  readonly limits?: WorkLimits;
  /** Computes the draws elsewhere (worker threads, shards; src/scale) instead of in this loop. */
  readonly drawRunner?: DrawRunner;
}

/**
 * Computes every draw of a plan as ranges run elsewhere and merged (src/scale). The merged
 * accumulators hold the same slots as one loop, so the report is the same apart from `record`.
 */
export interface DrawRunner {
  /** How the draws were split, recorded in the report's meta (meta.threads or meta.shards). */
  readonly record: { readonly threads?: number; readonly shards?: number };
  /** CPU allowances the work is spread over (shards): the work budget is multiplied by this; default 1. */
  readonly workShares?: number;
  run(plan: StressPlan, proposal: Proposal, onProgress?: (done: number, total: number) => void): Promise<StressAccumulators>;
}

/** Share of draws the proposal's own method may fail in before the report is refused. */
export const MAX_FAILED_SHARE = 0.5;

export async function optimizeProposal(proposal: Proposal, warnings: Warning[], clock: () => number = () => 0, limits: WorkLimits = {}): Promise<OptimizeResponse> {
  const started = clock();
  const scheme = proposal.resampling?.scheme ?? ('returns' in proposal.inputs ? 'stationary-bootstrap' : 'parametric');
  const workUnits = checkLimits(proposal, 1, scheme, methodList(proposal), limits);
  const problem = prepareProblem(proposal, warnings);
  const scenarioKelly = problem.history !== undefined && scheme !== 'parametric';
  const solved = solveBaseOptima(problem, scenarioKelly);
  const sensitivity = forecastSensitivityTables(problem, solved.base, solved.baseScenarios, workUnits, effectiveMaxWorkUnits(limits));
  return {
    meta: { version: VERSION, inputDigest: await inputDigest(proposal), periodsPerYear: problem.periodsPerYear, elapsedMs: Math.round(clock() - started) },
    assets: [...problem.assets],
    methods: problem.methods.map((spec, k) => {
      const table = sensitivity.tables[k];
      const base = describeOptimum(solved.base[k], problem.mean, problem.riskModel, problem.periodsPerYear);
      return table ? { method: spec, base, forecastSensitivity: table } : { method: spec, base };
    }),
    warnings: [...problem.warnings, ...solved.warnings, ...sensitivity.warnings],
    cautions: [...CAUTIONS],
  };
}

function computeDraws(plan: ReturnType<typeof planStress>, options: RunOptions): StressAccumulators {
  const acc = createAccumulators(plan);
  const size = options.rangeSize && options.rangeSize > 0 ? options.rangeSize : plan.draws;
  const progress = options.onProgress;
  if (size >= plan.draws) {
    // One range: fill the accumulators directly (no second copy to merge).
    runDraws(plan, 0, plan.draws, acc, progress ? (done) => progress(done, plan.draws) : undefined);
    return acc;
  }
  for (let start = 0; start < plan.draws; start += size) {
    const end = Math.min(plan.draws, start + size);
    const part = createAccumulators(plan);
    runDraws(plan, start, end, part, options.onProgress ? (done) => options.onProgress?.(start + done, plan.draws) : undefined);
    mergeAccumulators(acc, part);
  }
  return acc;
}

/** Stresses a proposal and keeps the per-draw data (for paired gate comparisons). */
export async function stressRun(proposal: Proposal, warnings: Warning[], options: RunOptions = {}): Promise<{ report: Omit<Report, 'verdict'>; run: StressRun }> {
  const clock = options.clock ?? (() => 0);
  const started = clock();
  const runner = options.drawRunner;
  const limits = runner?.workShares ? { ...options.limits, workShares: runner.workShares } : options.limits;
  const plan = planStress(proposal, warnings, { draws: options.draws, seed: options.seed, limits });
  const acc = runner ? await runner.run(plan, proposal, options.onProgress) : computeDraws(plan, options);
  const own = acc.methods[0].weights.counts();
  if (own.failedDraws > MAX_FAILED_SHARE * plan.draws) {
    throw new TooManyFailuresError(
      `${plan.problem.methods[0].name} failed in ${own.failedDraws} of ${plan.draws} draws (more than ${MAX_FAILED_SHARE * 100}%); the inputs are too unstable for a meaningful report. Consider a shrinkage covariance or a factor model.`,
    );
  }
  const digest = await inputDigest(proposal);
  const report = buildReport(plan, acc, { version: VERSION, inputDigest: digest, elapsedMs: Math.round(clock() - started) });
  if (runner) report.meta = { ...report.meta, ...runner.record };
  return { report, run: { plan, acc } };
}

export async function stressProposal(proposal: Proposal, warnings: Warning[], options: RunOptions = {}): Promise<Omit<Report, 'verdict'>> {
  return (await stressRun(proposal, warnings, options)).report;
}

/** A gate baseline: an earlier report, or an earlier proposal to stress now with the candidate's seed and draws. */
export type Baseline = { readonly kind: 'report'; readonly report: Omit<Report, 'verdict'> } | { readonly kind: 'proposal'; readonly proposal: Proposal; readonly warnings: Warning[] };

/**
 * Stress and judge. With a baseline proposal both runs share their random numbers (same seed and
 * draws), and maxIncrease rules use the paired batch-by-batch error of the difference; with a
 * baseline report only the two reports' errors are available (combined conservatively).
 */
export async function checkProposal(proposal: Proposal, warnings: Warning[], policy: Policy, baseline: Baseline | undefined, options: RunOptions = {}): Promise<Report> {
  const candidate = await stressRun(proposal, warnings, options);
  if (!baseline || baseline.kind === 'report') {
    return { ...candidate.report, verdict: judge(candidate.report, policy, baseline?.report) };
  }
  const base = await stressRun(baseline.proposal, baseline.warnings, {
    draws: candidate.run.plan.draws,
    seed: candidate.run.plan.seed,
    clock: options.clock,
    limits: options.limits,
    drawRunner: options.drawRunner,
  });
  const paired = (metric: PolicyRule['metric'], method: MethodName) => pairedStdErr(candidate.run, base.run, metric, method);
  return { ...candidate.report, verdict: judge(candidate.report, policy, base.report, paired) };
}
