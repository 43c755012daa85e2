import { assetVariances } from '../linalg/risk-ops.js';
import { KellyForecastSensitivity } from '../optimize/forecast-sensitivity-kelly.js';
import { QpForecastSensitivity, QpSensitivityUnavailable } from '../optimize/forecast-sensitivity-qp.js';
import { oneWayTurnover, type BreakEven, type PatternChangeAt } from '../optimize/forecast-sensitivity.js';
import type { KellyResult } from '../optimize/kelly.js';
import { meanVarianceProblem } from '../optimize/mean-variance.js';
import type { QpMethodResult } from '../optimize/qp-method.js';
import { OptimizationError, type ConstraintSet, type MethodResult } from '../optimize/types.js';
import { LIMITS } from '../schema/limits.js';
import type { MethodSpec } from '../schema/proposal.js';
import type { ForecastSensitivity, PatternChange } from '../schema/report.js';
import type { Warning } from '../schema/validate.js';
import { clean } from './base-optimum.js';
import { forecastSensitivityOps } from './forecast-sensitivity-work.js';
import { riskAversionOf, type PreparedProblem } from './problem.js';
import type { RequestShape } from '../cost/request-shape.js';
import { usesMean } from '../cost/work-model.js';

/**
 * methods[k].forecastSensitivity: for every method that uses the means, per asset, how far its
 * annual mean forecast must move before the base optimum's active pattern changes, next to how
 * well that forecast is known. Mean-variance (and Kelly's quadratic form) by the exact parametric
 * step (src/optimize/forecast-sensitivity-qp.ts); scenario Kelly by bracketing re-solves
 * (src/optimize/forecast-sensitivity-kelly.ts). No draws: the same figures in optimize and stress.
 *
 * Units: the core is per period; shifts and standard errors are annualised here with
 * μ_annual = p·μ (CONTRACT.md), so a per-period shift t reads as p·t a year.
 */

/** ∂w/∂μ columns are reported up to this many assets (N² numbers per method beyond it). */
export const MAX_ASSETS_WITH_DERIVATIVES = 50;

/** Per-period search unit for scenario Kelly when a forecast's standard error is 0 (1 basis point). */
const FALLBACK_KELLY_UNIT = 1e-4;

export interface ForecastSensitivityTables {
  /** Per method, in problem.methods order; undefined for methods that ignore the means or were skipped. */
  readonly tables: (ForecastSensitivity[] | undefined)[];
  readonly warnings: Warning[];
  /** Work units counted for the tables that were computed. */
  readonly workUnits: number;
}

/**
 * Annual standard error of each mean forecast: p·σ_i/√T (σ_i per-period volatility of the base
 * risk model, T observations; x̄ ~ N(μ, Σ/T)) — σ_i^annual·√p/√T — or p × the view's stdErr.
 */
export function forecastStdErrs(problem: PreparedProblem): Float64Array {
  const p = problem.periodsPerYear;
  if (problem.viewStdErr) return Float64Array.from(problem.viewStdErr, (s) => p * s);
  const variances = assetVariances(problem.riskModel);
  const t = problem.observations;
  return Float64Array.from(variances, (v) => (p * Math.sqrt(Math.max(0, v))) / Math.sqrt(t));
}

/** The solve-relevant shape of the prepared problem, in the terms of the request cost model (src/cost). */
function workShapeOf(problem: PreparedProblem, scenarioCount: number): RequestShape {
  const factors = problem.riskModel.kind === 'factor' ? problem.riskModel.k : 0;
  return {
    n: problem.n,
    rows: problem.history?.assets.periods ?? 0,
    factors,
    inputKind: factors > 0 ? 'factor-moments' : problem.history ? 'history' : 'dense-moments',
    covarianceEstimator: 'sample',
    factorModel: 'none',
    repair: false,
    groups: problem.constraints.groups.length,
    groupMemberships: problem.constraints.groups.reduce((total, g) => total + g.members.length, 0),
    inputNumbers: 0,
    assetIdChars: 0,
    methods: problem.methods,
    draws: 1,
    scheme: 'parametric',
    singular: false,
    singularDraws: false,
    scenarioKelly: scenarioCount > 0,
  };
}

/**
 * The tables for every method, within the work budget: `workUnitsSoFar` is what the request has
 * already been counted for; a method whose table would push the total over the limit is skipped
 * with a warning (the rest of the request still completes).
 */
export function forecastSensitivityTables(
  problem: PreparedProblem,
  base: readonly MethodResult[],
  baseScenarios: Float64Array | undefined,
  workUnitsSoFar: number,
  maxWorkUnits: number = LIMITS.maxWorkUnits,
): ForecastSensitivityTables {
  const warnings: Warning[] = [];
  const stdErr = forecastStdErrs(problem);
  const scenarioCount = baseScenarios ? baseScenarios.length / problem.n : 0;
  const shape = workShapeOf(problem, scenarioCount);
  let used = 0;
  const tables = problem.methods.map((spec, k) => {
    if (!usesMean(spec)) return undefined;
    const ops = forecastSensitivityOps([spec], { ...shape, scenarioKelly: spec.name === 'kelly' && scenarioCount > 0 });
    if (workUnitsSoFar + used + ops > maxWorkUnits) {
      warnings.push({
        code: 'forecast-sensitivity-skipped',
        message: `Break-even forecast shifts for ${spec.name} were not computed: they need about ${ops.toExponential(2)} more operations than the work limit allows (maxWorkUnits).`,
      });
      return undefined;
    }
    used += ops;
    try {
      if (spec.name === 'kelly' && baseScenarios && scenarioCount > 0) {
        return kellyTable(problem, spec, base[k] as KellyResult, baseScenarios, scenarioCount, stdErr);
      }
      return quadraticTable(problem, spec, base[k], stdErr);
    } catch (error) {
      if (error instanceof QpSensitivityUnavailable || error instanceof OptimizationError) {
        warnings.push({ code: 'forecast-sensitivity-unavailable', message: `Break-even forecast shifts for ${spec.name} are not reported: ${error.message}.` });
        return undefined;
      }
      throw error;
    }
  });
  return { tables, warnings, workUnits: used };
}

/** Mean-variance, or Kelly's quadratic form (mean-variance with λ = 1/fraction). */
function quadraticTable(problem: PreparedProblem, spec: MethodSpec, result: MethodResult, stdErr: Float64Array): ForecastSensitivity[] {
  const riskAversion = spec.name === 'mean-variance' ? riskAversionOf(spec) : 1 / (spec.name === 'kelly' ? (spec.fraction ?? 1) : 1);
  const qp = meanVarianceProblem(problem.riskModel, problem.mean, problem.constraints, riskAversion);
  const solution = (result as Partial<QpMethodResult>).solution;
  if (!solution) throw new QpSensitivityUnavailable('the optimum carries no QP solution');
  const sensitivity = new QpForecastSensitivity(qp, solution);
  const p = problem.periodsPerYear;
  const withDerivatives = problem.n <= MAX_ASSETS_WITH_DERIVATIVES;
  return problem.assets.map((asset, i) => {
    const r = sensitivity.shiftsOf(i);
    const unit = stdErr[i] / p;
    const turnover = (sign: 1 | -1): number => (unit > 0 ? oneWayTurnover(sensitivity.weightsAt(i, sign * unit, r), solution.x) : 0);
    const row = sensitivityRow(problem, asset, stdErr[i], r, turnover(1), turnover(-1));
    return withDerivatives ? { ...row, dWeightsDMean: Array.from(r.direction, (d) => clean(d / p)) } : row;
  });
}

function kellyTable(
  problem: PreparedProblem,
  spec: MethodSpec & { name: 'kelly' },
  result: KellyResult,
  scenarios: Float64Array,
  scenarioCount: number,
  stdErr: Float64Array,
): ForecastSensitivity[] {
  if (!result.diagnostics.converged) throw new QpSensitivityUnavailable('the base Kelly optimum did not converge, so its active pattern is not reliable');
  const search = new KellyForecastSensitivity(scenarios, scenarioCount, problem.constraints, spec.fraction ?? 1, result);
  const p = problem.periodsPerYear;
  return problem.assets.map((asset, i) => {
    const unit = stdErr[i] > 0 ? stdErr[i] / p : FALLBACK_KELLY_UNIT;
    const r = search.shiftsOf(i, unit);
    // The turnover is per standard error: with no standard error there is nothing to move by.
    const up = stdErr[i] > 0 && Number.isFinite(r.turnoverUp) ? r.turnoverUp : 0;
    const down = stdErr[i] > 0 && Number.isFinite(r.turnoverDown) ? r.turnoverDown : 0;
    return sensitivityRow(problem, asset, stdErr[i], r, up, down);
  });
}

const SIDE = { [-1]: 'lower', 0: 'inside', 1: 'upper' } as const;

function describeChange(constraints: ConstraintSet, assets: readonly string[], c: PatternChangeAt): PatternChange {
  const side = c.from !== 0 ? c.from : c.to;
  let limit: number;
  let name: string;
  if (c.kind === 'asset') {
    name = assets[c.index];
    limit = side < 0 ? constraints.lower[c.index] : constraints.upper[c.index];
  } else {
    const g = constraints.groups[c.index];
    name = g.name;
    limit = side < 0 ? g.min : g.max;
  }
  return { kind: c.kind, name, from: SIDE[c.from], to: SIDE[c.to], limit: clean(limit) };
}

function sensitivityRow(problem: PreparedProblem, asset: string, stdErr: number, r: BreakEven, turnoverUp: number, turnoverDown: number): ForecastSensitivity {
  const p = problem.periodsPerYear;
  const annual = (t: number | null): number | null => (t === null ? null : clean(p * t));
  const inStdErrs = (t: number | null): number | null => (t === null || !(stdErr > 0) ? null : clean((p * t) / stdErr));
  return {
    asset,
    stdErr: clean(stdErr),
    shiftUp: annual(r.up),
    shiftDown: annual(r.down),
    shiftUpStdErrs: inStdErrs(r.up),
    shiftDownStdErrs: inStdErrs(r.down),
    turnoverPerStdErr: { up: clean(turnoverUp), down: clean(turnoverDown) },
    changesUp: r.changesUp.map((c) => describeChange(problem.constraints, problem.assets, c)),
    changesDown: r.changesDown.map((c) => describeChange(problem.constraints, problem.assets, c)),
    shiftTolerance: clean(p * r.tolerance),
  };
}
