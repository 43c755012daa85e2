import type { MethodSpec, Policy, PolicyRule, Proposal } from '../schema/proposal.js';
import type { OptimizeResponse, Report } from '../schema/report.js';
import type { Warning } from '../schema/validate.js';
import { CAUTIONS } from '../schema/cautions.js';
import { VERSION } from '../version.js';
import { describeOptimum } from './base-optimum.js';
import { inputDigest } from './digest.js';
import { forecastSensitivityTables } from './forecast-sensitivity.js';
import { checkLimits, createAccumulators, mergeAccumulators, planStress, runDraws, solveBaseOptima, TooManyFailuresError, type StressAccumulators, type StressPlan } from './engine.js';
import { prepareProblem } from './problem.js';
import { DEFAULT_DRAWS } from '../cost/request-shape.js';
import { assertFiniteReport } from './finite-guard.js';
import { effectiveMaxWork } from '../cost/check.js';
import { buildReport } from './report.js';
import { methodKey } from './method-key.js';
import { pairedStdErr, type StressRun } from './paired.js';
import { judge } from './verdict.js';
import { figureBoundsOf } from './gate-bounds.js';

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
  /**
   * A lower work maximum than LIMITS.maxWorkUnits for this deployment (counted units of
   * src/cost/work-model.ts; larger values are capped at the limit). The HTTP layer passes the
   * operator's setting here.
   */
  readonly maxWork?: number;
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

export async function optimizeProposal(
  proposal: Proposal,
  warnings: Warning[],
  clockOrOptions: (() => number) | Pick<RunOptions, 'clock' | 'maxWork'> = {},
): Promise<OptimizeResponse> {
  const options = typeof clockOrOptions === 'function' ? { clock: clockOrOptions } : clockOrOptions;
  const clock = options.clock ?? (() => 0);
  const started = clock();
  const scheme = proposal.resampling?.scheme ?? ('returns' in proposal.inputs ? 'stationary-bootstrap' : 'parametric');
  const workUnits = checkLimits('optimize', proposal, 1, { maxWork: options.maxWork, warnings });
  const prepared = prepareProblem(proposal, warnings);
  const scenarioKelly = prepared.history !== undefined && scheme !== 'parametric';
  const solved = solveBaseOptima(prepared, scenarioKelly);
  // Methods without a base optimum (compared ones) are left out: solved.problem lists those kept.
  const problem = solved.problem;
  const sensitivity = forecastSensitivityTables(problem, solved.base, solved.baseScenarios, workUnits, effectiveMaxWork({ maxWork: options.maxWork }));
  return assertFiniteReport({
    meta: { version: VERSION, inputDigest: await inputDigest(proposal), periodsPerYear: problem.periodsPerYear, elapsedMs: Math.round(clock() - started) },
    assets: [...problem.assets],
    methods: problem.methods.map((spec, k) => {
      const table = sensitivity.tables[k];
      const base = describeOptimum(solved.base[k], problem.mean, problem.riskModel, problem.periodsPerYear);
      return table ? { method: spec, base, forecastSensitivity: table } : { method: spec, base };
    }),
    warnings: [...prepared.warnings, ...solved.warnings, ...sensitivity.warnings],
    cautions: [...CAUTIONS],
  });
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
    const part = createAccumulators(plan, { start, end });
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
  const plan = planStress(proposal, warnings, { draws: options.draws, seed: options.seed, maxWork: options.maxWork, workShares: runner?.workShares });
  const acc = runner ? await runner.run(plan, proposal, options.onProgress) : computeDraws(plan, options);
  const own = acc.methods[0].weights.counts();
  if (own.failedDraws > MAX_FAILED_SHARE * plan.draws) {
    // Name the most frequent reason, so the caller learns why (e.g. an arbitrage among the scenarios).
    let topReason = '';
    let topCount = 0;
    for (const [reason, count] of [...acc.methods[0].failures, ...acc.inputFailures]) {
      if (count > topCount || (count === topCount && reason < topReason)) {
        topReason = reason;
        topCount = count;
      }
    }
    throw new TooManyFailuresError(
      `${methodKey(plan.problem.methods[0])} failed in ${own.failedDraws} of ${plan.draws} draws (more than ${MAX_FAILED_SHARE * 100}%); the inputs are too unstable for a meaningful report.` +
        (topCount > 0 ? ` Most frequent reason (${topCount} draws): ${topReason}` : ' Consider a shrinkage covariance or a factor model.'),
    );
  }
  const digest = await inputDigest(proposal);
  const built = buildReport(plan, acc, { version: VERSION, inputDigest: digest, elapsedMs: Math.round(clock() - started) });
  if (runner) built.meta = { ...built.meta, ...runner.record };
  const report = assertFiniteReport(built);
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
  // Both runs are priced together before either starts: a check against a baseline proposal does
  // the work (and holds the memory) of two stress runs.
  const draws = options.draws ?? proposal.resampling?.draws ?? DEFAULT_DRAWS;
  checkLimits('check', proposal, draws, {
    maxWork: options.maxWork,
    warnings,
    ...(baseline?.kind === 'proposal' ? { baseline: baseline.proposal, baselineWarnings: baseline.warnings } : {}),
  });
  const candidate = await stressRun(proposal, warnings, options);
  if (!baseline || baseline.kind === 'report') {
    return assertFiniteReport({ ...candidate.report, verdict: judge(candidate.report, policy, baseline?.report, undefined, { candidate: figureBoundsOf(candidate.run) }) });
  }
  const base = await stressRun(baseline.proposal, baseline.warnings, {
    draws: candidate.run.plan.draws,
    seed: candidate.run.plan.seed,
    clock: options.clock,
    maxWork: options.maxWork,
    drawRunner: options.drawRunner,
  });
  const paired = (metric: PolicyRule['metric'], spec: MethodSpec) => pairedStdErr(candidate.run, base.run, metric, spec);
  return assertFiniteReport({ ...candidate.report, verdict: judge(candidate.report, policy, base.report, paired, { candidate: figureBoundsOf(candidate.run), baseline: figureBoundsOf(base.run) }) });
}
