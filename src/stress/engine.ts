import { EstimationError } from '../estimate/errors.js';
import { sampleMean } from '../estimate/means.js';
import { EstimationWorkspace } from '../estimate/workspace.js';
import type { RiskModel } from '../linalg/risk-model.js';
import { factorVarianceOf, portfolioVariance, riskContributionSharesInto, specificVarianceOf } from '../optimize/risk-decomposition.js';
import { OptimizationError, type MethodResult } from '../optimize/types.js';
import { drawBootstrapIndices } from '../resample/bootstrap.js';
import { historyMeanBlockLength } from '../resample/block-length.js';
import { drawIndependentNormal } from '../resample/normal.js';
import {
  createParametricScratch,
  createResampledRiskModel,
  drawParametricInputs,
  prepareParametricBase,
  type ParametricBase,
  type ParametricScratch,
} from '../resample/parametric.js';
import { createDrawStream, STREAM_PURPOSE, type Seed } from '../resample/streams.js';
import { LIMITS } from '../schema/limits.js';
import type { Proposal } from '../schema/proposal.js';
import { SINGULAR_COVARIANCE_WARNING, type Warning } from '../schema/validate.js';
import { ChannelVarianceAccumulator } from '../statistics/channel-variance.js';
import { estimateFromHistory } from './estimate-inputs.js';
import type { MethodSolver, SolveInputs } from './method-interface.js';
import { createMethodSolver, solveReferenceMeanVariance } from './method-solvers.js';
import { methodList, prepareProblem, type PreparedProblem } from './problem.js';
import { ScalarAccumulator } from '../statistics/scalar-accumulator.js';
import { difference, expectedShortfall, shiftedRows } from './scenarios.js';
import { WeightAccumulator } from '../statistics/weight-accumulator.js';
import { effectiveMaxWork, priceRequest, type CostOptions } from '../cost/check.js';
import { DEFAULT_DRAWS, requestShape, type Job } from '../cost/request-shape.js';
import { degenerateInputWarnings } from './degenerate-inputs.js';
import { methodKey } from './method-key.js';

/** A request over a service limit (HTTP 413). */
export class LimitError extends Error {
  constructor(
    readonly limit: string,
    readonly value: number,
    message: string,
  ) {
    super(message);
    this.name = 'LimitError';
  }
}

/** The proposal's method failed in too many draws for the report to mean anything (HTTP 422). */
export class TooManyFailuresError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'TooManyFailuresError';
  }
}

export type Scheme = 'stationary-bootstrap' | 'iid-bootstrap' | 'parametric';

/** Tail level of the expected shortfall reported for the proposal (95 %, common practice). */
export const SHORTFALL_LEVEL = 0.95;

/** Everything fixed for a request before the first draw. */
export interface StressPlan {
  readonly problem: PreparedProblem;
  readonly draws: number;
  readonly seed: Seed;
  readonly scheme: Scheme;
  readonly meanBlockLength: number | null;
  readonly solvers: readonly MethodSolver[];
  readonly base: readonly MethodResult[];
  /** Certainty equivalent of the mean-variance optimum at the base inputs (the score every method is compared with). */
  readonly referenceCertaintyEquivalent: number;
  readonly parametric?: ParametricBase;
  /** Base scenario rows (history moved to the base mean), for scenario Kelly. */
  readonly baseScenarios?: Float64Array;
  readonly workUnits: number;
  /** The work budget in force for this request (the deployment may lower the built-in one). */
  readonly maxWorkUnits: number;
  readonly warnings: Warning[];
  /** What planning solved for, to hand to ranges computed elsewhere (planStress's `solved`). */
  readonly solution: PlanSolution;
}

/**
 * The part of a plan that takes solving: the base optima (which methods have one, their results
 * and warm starts), the bootstrap's mean block length and the reference score. All deterministic
 * functions of the proposal, so a range computed on another thread may take them instead of
 * solving again and draws exactly what one run draws. Plain data and typed arrays only, so it
 * passes to a worker thread by structured clone (every double bit for bit).
 */
export interface PlanSolution {
  readonly meanBlockLength: number | null;
  /** Positions, in the proposal's method list, of the methods with a base optimum (the others are left out). */
  readonly kept: readonly number[];
  readonly base: readonly MethodResult[];
  readonly referenceCertaintyEquivalent: number;
  /** The warnings the base solves gave (method left out, degenerate inputs, Kelly approximation). */
  readonly baseWarnings: readonly Warning[];
}

/** Per-method accumulators. */
export interface MethodAccumulators {
  readonly weights: WeightAccumulator;
  readonly channels: ChannelVarianceAccumulator;
  readonly turnoverFromProposal: ScalarAccumulator;
  readonly turnoverFromBase: ScalarAccumulator;
  readonly volatility: ScalarAccumulator;
  readonly certaintyEquivalentLoss: ScalarAccumulator;
  readonly failures: Map<string, number>;
}

/** Everything the draws produce; ranges of draws can be computed apart and merged. */
export interface StressAccumulators {
  readonly methods: MethodAccumulators[];
  readonly proposalVolatility: ScalarAccumulator;
  readonly proposalReturn: ScalarAccumulator;
  readonly proposalShortfall: ScalarAccumulator;
  readonly proposalRiskShares: WeightAccumulator;
  /** Draws whose inputs could not be estimated, by reason. */
  readonly inputFailures: Map<string, number>;
}

/**
 * Prices the request (src/cost) before any estimation or solve, so an oversized request is
 * refused at once (413) instead of running out of CPU or memory mid-way. Returns the estimated
 * work. `baseline`: the other proposal of a check, run with the same draws.
 */
/** Limits a deployment may lower (maxWork) and the CPU allowances a sharded request spreads over (workShares). */
export type WorkLimits = CostOptions;

export function checkLimits(
  job: Job,
  proposal: Proposal,
  draws: number,
  options: CostOptions & { baseline?: Proposal; warnings?: readonly Warning[]; baselineWarnings?: readonly Warning[] } = {},
): number {
  if (!Number.isInteger(draws) || draws < 1) throw new LimitError('draws', draws, `draws must be a positive integer, got ${draws}`);
  if (draws > LIMITS.maxDraws) throw new LimitError('maxDraws', LIMITS.maxDraws, `draws ${draws} is over the limit of ${LIMITS.maxDraws} (maxDraws)`);
  // Validation's PSD test found the supplied covariance singular (its warning): priced as such
  // here too, as validation priced it (request-shape.ts cannot tell without that test).
  const shape = requestShape(proposal, methodList(proposal), draws, knownSingular(options.warnings));
  const baseline = options.baseline ? requestShape(options.baseline, methodList(options.baseline), draws, knownSingular(options.baselineWarnings)) : undefined;
  const verdict = priceRequest(job, shape, { maxWork: options.maxWork, workShares: options.workShares, baseline });
  if (verdict.over) throw new LimitError(verdict.over.limit, verdict.over.value, verdict.over.message);
  return verdict.work;
}

function knownSingular(warnings: readonly Warning[] | undefined): boolean {
  return warnings?.some((w) => w.code === SINGULAR_COVARIANCE_WARNING) ?? false;
}

/**
 * Everything fixed before the first draw. `solved`: the solution of an earlier plan of the same
 * proposal (another thread's), taken instead of solving the base optima, block length and
 * reference again; the inputs are still prepared and priced here.
 */
export function planStress(
  proposal: Proposal,
  warnings: Warning[],
  overrides: { draws?: number; seed?: Seed; maxWork?: number; workShares?: number } = {},
  solved?: PlanSolution,
): StressPlan {
  const draws = overrides.draws ?? proposal.resampling?.draws ?? DEFAULT_DRAWS;
  const seed = overrides.seed ?? proposal.resampling?.seed ?? 'wobble';
  const isHistory = 'returns' in proposal.inputs;
  const scheme: Scheme = proposal.resampling?.scheme ?? (isHistory ? 'stationary-bootstrap' : 'parametric');
  const workUnits = checkLimits('stress', proposal, draws, { maxWork: overrides.maxWork, workShares: overrides.workShares, warnings });

  const prepared = prepareProblem(proposal, warnings);
  const history = prepared.history;
  const planWarnings = [...prepared.warnings];
  let meanBlockLength: number | null = solved ? solved.meanBlockLength : null;
  if (!solved && history && scheme === 'stationary-bootstrap') {
    const requested = proposal.resampling?.meanBlockLength ?? 'auto';
    meanBlockLength =
      requested === 'auto'
        ? historyMeanBlockLength(history.assets.values, history.assets.periods, history.assets.series).meanBlockLength
        : requested;
  }
  const scenarioKelly = history !== undefined && scheme !== 'parametric';

  const { problem, solvers, base, baseScenarios, warnings: baseWarnings, kept } = solveBaseOptima(prepared, scenarioKelly, solved);
  planWarnings.push(...baseWarnings);

  const referenceCertaintyEquivalent = solved
    ? solved.referenceCertaintyEquivalent
    : certaintyEquivalent(problem, solveReferenceMeanVariance(problem, problem.methods, base), createScratch(problem));
  const parametric =
    scheme === 'parametric'
      ? prepareParametricBase({ mean: problem.mean, risk: problem.riskModel, observations: problem.observations, meanStdErr: problem.viewStdErr })
      : undefined;
  return {
    problem,
    draws,
    seed,
    scheme,
    meanBlockLength,
    solvers,
    base,
    referenceCertaintyEquivalent,
    parametric,
    baseScenarios,
    workUnits,
    maxWorkUnits: effectiveMaxWork({ maxWork: overrides.maxWork }),
    warnings: planWarnings,
    solution: { meanBlockLength, kept, base, referenceCertaintyEquivalent, baseWarnings },
  };
}

/**
 * Every method's solver and its optimum on the unperturbed inputs (shared by optimize and stress).
 * `solved`: optima found earlier for the same problem (PlanSolution), taken as they are.
 */
export function solveBaseOptima(
  problem: PreparedProblem,
  scenarioKelly: boolean,
  solved?: Pick<PlanSolution, 'kept' | 'base' | 'baseWarnings'>,
): { problem: PreparedProblem; solvers: MethodSolver[]; base: MethodResult[]; baseScenarios?: Float64Array; warnings: Warning[]; kept: number[] } {
  const n = problem.n;
  const history = problem.history;
  const solvers = problem.methods.map((spec) => createMethodSolver(spec, problem, { scenarioKelly }));
  let baseScenarios: Float64Array | undefined;
  let rows = 0;
  // Scenario rows are built (here and per draw) only when some method reads them.
  if (history && scenarioKelly && problem.methods.some((m) => m.name === 'kelly')) {
    rows = history.assets.periods;
    baseScenarios = new Float64Array(rows * n);
    // The history moved to the base mean (a no-op without views).
    const historyMean = sampleMean(history.assets);
    shiftedRows(history.assets.values, n, rows, undefined, difference(problem.mean, historyMean, new Float64Array(n)), baseScenarios);
  }
  if (solved) {
    const kept = [...solved.kept];
    const methods = kept.map((k) => problem.methods[k]);
    const keptProblem: PreparedProblem = kept.length === problem.methods.length ? problem : { ...problem, methods };
    return { problem: keptProblem, solvers: kept.map((k) => solvers[k]), base: [...solved.base], baseScenarios, warnings: [...solved.baseWarnings], kept };
  }
  const inputs: SolveInputs = { mean: problem.mean, riskModel: problem.riskModel, scenarios: baseScenarios, scenarioCount: rows };
  const warnings: Warning[] = degenerateInputWarnings(problem);
  // Every base optimum is judged by its own diagnostics. The proposal's own method must have an
  // answer (else the request is refused: 422 naming the cause); a compared method without one is
  // left out of the report with a warning saying why, so it never shows made-up figures.
  const kept: number[] = [];
  const base: MethodResult[] = [];
  problem.methods.forEach((spec, k) => {
    try {
      const result = solvers[k].solve(inputs);
      const failed = solveFailure(result);
      if (failed) throw new OptimizationError('not-converged', `${methodKey(spec)} on the base inputs: ${failed}`);
      base.push(result);
      kept.push(k);
    } catch (e) {
      if (k === 0 || !(e instanceof OptimizationError)) throw e;
      warnings.push({ code: 'method-excluded', message: `${methodKey(spec)} was left out of the comparison: ${e.code}: ${e.message}` });
    }
  });
  const methods = kept.map((k) => problem.methods[k]);
  const keptProblem: PreparedProblem = kept.length === problem.methods.length ? problem : { ...problem, methods };
  methods.forEach((spec) => {
    if (spec.name === 'kelly' && !scenarioKelly) {
      warnings.push({
        code: 'kelly-quadratic-approximation',
        message: `Kelly${history ? ' under parametric resampling' : ' with moments-only inputs'} uses the quadratic (continuous-time) approximation: mean-variance with risk aversion 1/fraction = ${1 / (spec.fraction ?? 1)}.`,
      });
    }
  });
  // Each method's own warnings stay with its optimum (methods[i].base.warnings), not repeated here.
  return { problem: keptProblem, solvers: kept.map((k) => solvers[k]), base, baseScenarios, warnings, kept };
}

/**
 * Certainty equivalent at the base inputs, per period: μ₀ᵀw − ½(λ_f·wᵀBFBᵀw + λ_s·wᵀDw), or
 * μ₀ᵀw − (λ/2)·wᵀΣ₀w for a dense Σ (DeMiguel, Garlappi & Uppal 2009 score methods this way).
 */
export function certaintyEquivalent(problem: PreparedProblem, w: Float64Array, scratch: Scratch): number {
  let mu = 0;
  for (let i = 0; i < problem.n; i++) mu += problem.mean[i] * w[i];
  const model = problem.riskModel;
  const ra = problem.scoringRiskAversion;
  if (model.kind === 'factor') return mu - 0.5 * (ra.factor * factorVarianceOf(model, w, scratch.k) + ra.specific * specificVarianceOf(model, w));
  return mu - 0.5 * ra.factor * portfolioVariance(model, w, scratch.n, scratch.k);
}

/** Scratch for covariance products: N entries, and 2K for a factor model (covTimes needs 2K). */
export interface Scratch {
  readonly n: Float64Array;
  readonly k: Float64Array;
}

export function createScratch(problem: PreparedProblem): Scratch {
  return { n: new Float64Array(problem.n), k: new Float64Array(problem.riskModel.kind === 'factor' ? 2 * problem.riskModel.k : 2) };
}

/**
 * Accumulators for the draws [range.start, range.end) of the plan (all of them when omitted): the
 * per-draw slots are sized to the range, so a thread or shard holds its share of a run's memory,
 * not the whole run's. The channel accumulators keep per-batch sums over the whole request
 * (O(batches × N), small next to the per-draw rows).
 */
export function createAccumulators(plan: StressPlan, range?: { readonly start: number; readonly end: number }): StressAccumulators {
  const { draws } = plan;
  const n = plan.problem.n;
  return {
    methods: plan.solvers.map(() => ({
      weights: new WeightAccumulator(draws, n, range),
      channels: new ChannelVarianceAccumulator(draws, n),
      turnoverFromProposal: new ScalarAccumulator(draws, range),
      turnoverFromBase: new ScalarAccumulator(draws, range),
      volatility: new ScalarAccumulator(draws, range),
      certaintyEquivalentLoss: new ScalarAccumulator(draws, range),
      failures: new Map<string, number>(),
    })),
    proposalVolatility: new ScalarAccumulator(draws, range),
    proposalReturn: new ScalarAccumulator(draws, range),
    proposalShortfall: new ScalarAccumulator(draws, range),
    proposalRiskShares: new WeightAccumulator(draws, n, range),
    inputFailures: new Map<string, number>(),
  };
}

function bump(map: Map<string, number>, key: string): void {
  map.set(key, (map.get(key) ?? 0) + 1);
}

export function mergeAccumulators(into: StressAccumulators, from: StressAccumulators): void {
  into.methods.forEach((m, i) => {
    const o = from.methods[i];
    m.weights.merge(o.weights);
    m.channels.merge(o.channels);
    m.turnoverFromProposal.merge(o.turnoverFromProposal);
    m.turnoverFromBase.merge(o.turnoverFromBase);
    m.volatility.merge(o.volatility);
    m.certaintyEquivalentLoss.merge(o.certaintyEquivalentLoss);
    for (const [k, v] of o.failures) m.failures.set(k, (m.failures.get(k) ?? 0) + v);
  });
  into.proposalVolatility.merge(from.proposalVolatility);
  into.proposalReturn.merge(from.proposalReturn);
  into.proposalShortfall.merge(from.proposalShortfall);
  into.proposalRiskShares.merge(from.proposalRiskShares);
  for (const [k, v] of from.inputFailures) into.inputFailures.set(k, (into.inputFailures.get(k) ?? 0) + v);
}

/** Per-range buffers, allocated once and reused by every draw (no allocation per draw in the loop itself). */
interface DrawBuffers {
  readonly rows: Int32Array;
  readonly mean: Float64Array;
  readonly sampleMean: Float64Array;
  readonly shift: Float64Array;
  readonly cov: Float64Array;
  readonly jointScenarios?: Float64Array;
  readonly meanOnlyScenarios?: Float64Array;
  readonly covOnlyScenarios?: Float64Array;
  readonly shortfall: Float64Array;
  readonly scratch: Scratch;
  readonly shares: Float64Array;
  readonly parametricScratch?: ParametricScratch;
  readonly parametricRisk?: RiskModel;
  readonly workspace: EstimationWorkspace;
}

function createBuffers(plan: StressPlan): DrawBuffers {
  const n = plan.problem.n;
  const t = plan.problem.history?.assets.periods ?? 0;
  const scen = plan.baseScenarios ? () => new Float64Array(t * n) : () => undefined;
  return {
    rows: new Int32Array(t),
    mean: new Float64Array(n),
    sampleMean: new Float64Array(n),
    shift: new Float64Array(n),
    cov: new Float64Array(n * n),
    jointScenarios: scen(),
    meanOnlyScenarios: scen(),
    covOnlyScenarios: scen(),
    shortfall: new Float64Array(Math.max(t, 1)),
    scratch: createScratch(plan.problem),
    shares: new Float64Array(n),
    parametricScratch: plan.parametric ? createParametricScratch(plan.parametric) : undefined,
    parametricRisk: plan.parametric ? createResampledRiskModel(plan.parametric) : undefined,
    workspace: new EstimationWorkspace(),
  };
}

/** The three channels' inputs for one draw. */
interface DrawInputs {
  readonly joint: SolveInputs;
  readonly meanOnly: SolveInputs;
  readonly covOnly: SolveInputs;
  /** Rows of the history behind this draw (bootstrap schemes). */
  readonly rows?: Int32Array;
}

function drawInputs(plan: StressPlan, b: number, buf: DrawBuffers): DrawInputs {
  const p = plan.problem;
  const n = p.n;
  const base = { mean: p.mean, riskModel: p.riskModel };
  if (plan.parametric) {
    drawParametricInputs(plan.seed, b, plan.parametric, buf.mean, buf.parametricRisk as RiskModel, buf.parametricScratch as ParametricScratch);
    const risk = buf.parametricRisk as RiskModel;
    return { joint: { mean: buf.mean, riskModel: risk }, meanOnly: { mean: buf.mean, riskModel: p.riskModel }, covOnly: { mean: p.mean, riskModel: risk } };
  }
  const history = p.history;
  if (!history || !p.plan) throw new Error('bootstrap needs a return history');
  const t = history.assets.periods;
  drawBootstrapIndices(plan.seed, b, plan.scheme === 'iid-bootstrap' ? 'iid-bootstrap' : 'stationary-bootstrap', t, plan.meanBlockLength ?? 1, buf.rows);
  const est = estimateFromHistory(history, p.plan, buf.rows, { mean: buf.sampleMean, cov: buf.cov, workspace: buf.workspace });
  let mean = est.mean;
  if (p.viewStdErr) {
    // Views replace the estimated means; their noise is their own standard error.
    mean = drawIndependentNormal(createDrawStream(plan.seed, b, STREAM_PURPOSE.mean), p.mean, p.viewStdErr, buf.mean);
  }
  let joint: SolveInputs = { mean, riskModel: est.riskModel };
  let meanOnly: SolveInputs = { mean, riskModel: base.riskModel };
  let covOnly: SolveInputs = { mean: base.mean, riskModel: est.riskModel };
  if (plan.baseScenarios && buf.jointScenarios && buf.meanOnlyScenarios && buf.covOnlyScenarios) {
    const x = history.assets.values;
    // joint: the draw's rows at the draw's mean; mean-only: base rows at the draw's mean; covariance-only: the draw's rows at the base mean.
    shiftedRows(x, n, t, buf.rows, difference(mean, est.mean, buf.shift), buf.jointScenarios);
    shiftedRows(plan.baseScenarios, n, t, undefined, difference(mean, p.mean, buf.shift), buf.meanOnlyScenarios);
    shiftedRows(x, n, t, buf.rows, difference(p.mean, est.mean, buf.shift), buf.covOnlyScenarios);
    joint = { ...joint, scenarios: buf.jointScenarios, scenarioCount: t };
    meanOnly = { ...meanOnly, scenarios: buf.meanOnlyScenarios, scenarioCount: t };
    covOnly = { ...covOnly, scenarios: buf.covOnlyScenarios, scenarioCount: t };
  }
  return { joint, meanOnly, covOnly, rows: buf.rows };
}

function failureReason(e: unknown): string {
  if (e instanceof OptimizationError) {
    const text = e.label ?? e.message;
    return (text.startsWith(`${e.code}:`) ? text : `${e.code}: ${text}`).slice(0, 200);
  }
  if (e instanceof EstimationError) return `estimation: ${e.message}`.slice(0, 200);
  if (e instanceof RangeError) return `numerical: ${e.message}`.slice(0, 200);
  throw e;
}

/**
 * A solve's own verdict on itself: undefined when it is an answer, else the failure reason
 * (a short, countable label). Every per-draw solve is judged this way — unconverged, a residual
 * above the method's accepted tolerance (`converged` is false then), or non-finite weights.
 */
export function solveFailure(result: MethodResult): string | undefined {
  const w = result.weights;
  for (let i = 0; i < w.length; i++) if (!Number.isFinite(w[i])) return 'numerical: non-finite weights';
  if (!Number.isFinite(result.diagnostics.kktResidual)) return 'not-converged: non-finite KKT residual';
  if (!result.diagnostics.converged) return `not-converged: ${result.diagnostics.solver} stopped above its accepted KKT residual`;
  return undefined;
}

function turnover(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += Math.abs(a[i] - b[i]);
  return 0.5 * s;
}

/**
 * Computes draws [start, end) into `acc`. Each draw depends only on (seed, draw index) and the
 * base problem — warm starts come from the base optimum, never from the previous draw — so any
 * split of the draws into ranges gives the same accumulators after merging.
 */
export function runDraws(plan: StressPlan, start: number, end: number, acc: StressAccumulators, onProgress?: (done: number) => void): void {
  const p = plan.problem;
  const ppy = p.periodsPerYear;
  const sqrtPpy = Math.sqrt(ppy);
  const buf = createBuffers(plan);
  const proposal = p.proposalWeights;
  for (let b = start; b < end; b++) {
    let inputs: DrawInputs;
    try {
      inputs = drawInputs(plan, b, buf);
    } catch (e) {
      bump(acc.inputFailures, failureReason(e));
      for (const m of acc.methods) {
        m.weights.recordFailure(b);
        m.channels.recordFailure(b, 'mean-only');
        m.channels.recordFailure(b, 'covariance-only');
        for (const s of [m.turnoverFromProposal, m.turnoverFromBase, m.volatility, m.certaintyEquivalentLoss]) s.recordFailure(b);
      }
      for (const s of [acc.proposalVolatility, acc.proposalReturn, acc.proposalShortfall]) s.recordFailure(b);
      acc.proposalRiskShares.recordFailure(b);
      continue;
    }
    // The proposal itself under this draw's inputs.
    const jointRisk = inputs.joint.riskModel;
    const variance = portfolioVariance(jointRisk, proposal, buf.scratch.n, buf.scratch.k);
    acc.proposalVolatility.record(b, Math.sqrt(Math.max(variance, 0)) * sqrtPpy);
    let mu = 0;
    for (let i = 0; i < p.n; i++) mu += inputs.joint.mean[i] * proposal[i];
    acc.proposalReturn.record(b, mu * ppy);
    riskContributionSharesInto(jointRisk, proposal, buf.shares, buf.scratch.k);
    acc.proposalRiskShares.record(b, buf.shares);
    if (inputs.rows && p.history) {
      acc.proposalShortfall.record(b, expectedShortfall(p.history.assets.values, p.n, p.history.assets.periods, inputs.rows, proposal, SHORTFALL_LEVEL, buf.shortfall));
    } else acc.proposalShortfall.recordFailure(b);

    plan.solvers.forEach((solver, k) => {
      const m = acc.methods[k];
      const base = plan.base[k];
      let joint: MethodResult;
      try {
        joint = solver.solve(inputs.joint, base.warmStart);
        const failed = solveFailure(joint);
        if (failed) throw new OptimizationError('not-converged', failed);
      } catch (e) {
        bump(m.failures, failureReason(e));
        m.weights.recordFailure(b);
        for (const s of [m.turnoverFromProposal, m.turnoverFromBase, m.volatility, m.certaintyEquivalentLoss]) s.recordFailure(b);
        m.channels.recordFailure(b, 'mean-only');
        m.channels.recordFailure(b, 'covariance-only');
        return;
      }
      const w = joint.weights;
      m.weights.record(b, w);
      m.turnoverFromProposal.record(b, turnover(w, proposal));
      m.turnoverFromBase.record(b, turnover(w, base.weights));
      m.volatility.record(b, Math.sqrt(Math.max(portfolioVariance(jointRisk, w, buf.scratch.n, buf.scratch.k), 0)) * sqrtPpy);
      m.certaintyEquivalentLoss.record(b, (plan.referenceCertaintyEquivalent - certaintyEquivalent(p, w, buf.scratch)) * ppy);
      if (!solver.usesMean) {
        // The optimum ignores the means: the mean-only channel keeps the base weights (variance exactly 0)
        // and the covariance-only channel is the joint one. No solve needed for either.
        m.channels.record(b, 'mean-only', base.weights);
        m.channels.record(b, 'covariance-only', w);
        return;
      }
      for (const [channel, channelInputs] of [
        ['mean-only', inputs.meanOnly],
        ['covariance-only', inputs.covOnly],
      ] as const) {
        try {
          const result = solver.solve(channelInputs, base.warmStart);
          const failed = solveFailure(result);
          if (failed) throw new OptimizationError('not-converged', failed);
          m.channels.record(b, channel, result.weights);
        } catch (e) {
          bump(m.failures, `${channel} channel: ${failureReason(e)}`);
          m.channels.recordFailure(b, channel);
        }
      }
    });
    onProgress?.(b + 1 - start);
  }
}

