import { describe, expect, it } from 'vitest';
import type { RequestShape } from '../../src/cost/request-shape.js';
import { oneWayTurnover, patternOf } from '../../src/optimize/forecast-sensitivity.js';
import { meanVariance } from '../../src/optimize/mean-variance.js';
import { PolicySchema, type ProposalInput } from '../../src/schema/proposal.js';
import { OptimizeResponseSchema, ReportSchema, type ForecastSensitivity } from '../../src/schema/report.js';
import { validateProposal } from '../../src/schema/validate.js';
import { LIMITS } from '../../src/schema/limits.js';
import { planStress } from '../../src/stress/engine.js';
import { breakEvenFindings } from '../../src/stress/findings.js';
import { forecastSensitivityTables } from '../../src/stress/forecast-sensitivity.js';
import { forecastSensitivityOps } from '../../src/stress/forecast-sensitivity-work.js';
import { buildConstraintSet } from '../../src/stress/problem.js';
import { checkProposal, optimizeProposal, stressProposal } from '../../src/stress/run.js';
import { BREAK_EVEN_CAP_STD_ERRS, judge } from '../../src/stress/verdict.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

function valid(input: ProposalInput) {
  const v = validateProposal(input);
  if (!v.ok) throw new Error(JSON.stringify(v));
  return v;
}

/** EX3 moments as monthly figures, long-only with a 45 % cap: a pattern with breakpoints. */
function capped(overrides: Partial<ProposalInput> = {}): ProposalInput {
  const base = momentsProposal();
  const inputs = base.inputs as { mean: number[]; covariance: number[][] };
  return momentsProposal({
    inputs: { mean: inputs.mean.map((m) => m / 12), covariance: inputs.covariance.map((r) => r.map((c) => c / 12)), observations: 60, periodsPerYear: 12 },
    method: { name: 'mean-variance', riskAversion: 2 },
    compare: [{ name: 'minimum-variance' }, { name: 'kelly', fraction: 0.5 }],
    constraints: { longOnly: true, upper: 0.45 },
    ...overrides,
  });
}

describe('methods[k].forecastSensitivity', () => {
  it('is reported for the methods that use the means, with annual stdErr p·σ_i/√T and shifts in its units', async () => {
    const v = valid(capped());
    const r = OptimizeResponseSchema.parse(await optimizeProposal(v.proposal, v.warnings));
    expect(r.methods.map((m) => m.forecastSensitivity !== undefined)).toEqual([true, false, true]);
    const rows = r.methods[0].forecastSensitivity as ForecastSensitivity[];
    const inputs = v.proposal.inputs as { covariance: number[][]; mean: number[] };
    rows.forEach((row, i) => {
      // x̄ ~ N(μ, Σ/T): per-period SE σ_i/√T, annual ×12.
      expect(row.stdErr).toBeCloseTo((12 * Math.sqrt(inputs.covariance[i][i])) / Math.sqrt(60), 10);
      if (row.shiftUp !== null) expect(row.shiftUpStdErrs).toBeCloseTo(row.shiftUp / row.stdErr, 9);
      if (row.shiftDown !== null) expect(row.shiftDownStdErrs).toBeCloseTo(row.shiftDown / row.stdErr, 9);
      expect(row.dWeightsDMean).toHaveLength(3);
    });
    // Annual units: the per-period mean moved by shiftUp/12 (just past it) changes the pattern, just below does not.
    const model = { kind: 'dense' as const, n: 3, cov: Float64Array.from(inputs.covariance.flat()) };
    const constraints = buildConstraintSet(v.proposal);
    const base = patternOf(constraints, Float64Array.from(r.methods[0].base.weights));
    let checked = 0;
    rows.forEach((row, i) => {
      for (const [annual, sign] of [
        [row.shiftUp, 1],
        [row.shiftDown, -1],
      ] as const) {
        if (annual === null) continue;
        const at = (f: number) => {
          const mean = Float64Array.from(inputs.mean);
          mean[i] += (sign * f * annual) / 12;
          return patternOf(constraints, meanVariance(model, mean, constraints, 2).weights);
        };
        expect(Array.from(at(1 - 1e-4).assets)).toEqual(Array.from(base.assets));
        expect(Array.from(at(1 + 1e-4).assets)).not.toEqual(Array.from(base.assets));
        checked++;
      }
      // Turnover at one standard error, by a direct re-solve.
      const mean = Float64Array.from(inputs.mean);
      mean[i] += row.stdErr / 12;
      const moved = meanVariance(model, mean, constraints, 2).weights;
      expect(row.turnoverPerStdErr.up).toBeCloseTo(oneWayTurnover(moved, Float64Array.from(r.methods[0].base.weights)), 9);
    });
    expect(checked).toBeGreaterThan(2);
  });

  it('a supplied factor model with separate factor and specific risk aversion (EX4F, capped): every shift verified by re-solving just below and past it', async () => {
    const fm = { factors: ['f1', 'f2'], loadings: [[1, 0.2], [0.9, -0.3], [1.1, 0.5], [0.8, 0]], factorCovariance: [[0.04, 0.002], [0.002, 0.01]], specificVariance: [0.01, 0.02, 0.015, 0.03] };
    const v = valid({
      assets: ['a', 'b', 'c', 'd'],
      weights: [0.25, 0.25, 0.25, 0.25],
      inputs: { mean: [0.06, 0.05, 0.07, 0.04], factorModel: fm, observations: 60, periodsPerYear: 1 },
      method: { name: 'mean-variance', riskAversion: { factor: 4, specific: 10 } },
      compare: [],
      constraints: { longOnly: true, upper: 0.35 },
    });
    const r = await optimizeProposal(v.proposal, v.warnings);
    const rows = r.methods[0].forecastSensitivity as ForecastSensitivity[];
    const model = {
      kind: 'factor' as const, n: 4, k: 2, factorNames: fm.factors,
      loadings: Float64Array.from(fm.loadings.flat()), factorCov: Float64Array.from(fm.factorCovariance.flat()), specificVar: Float64Array.from(fm.specificVariance),
    };
    const constraints = buildConstraintSet(v.proposal);
    const base = patternOf(constraints, Float64Array.from(r.methods[0].base.weights));
    let checked = 0;
    rows.forEach((row, i) => {
      for (const [shift, sign] of [[row.shiftUp, 1], [row.shiftDown, -1]] as const) {
        if (shift === null) continue;
        const at = (f: number) => {
          const mean = Float64Array.of(0.06, 0.05, 0.07, 0.04);
          mean[i] += sign * f * shift;
          return Array.from(patternOf(constraints, meanVariance(model, mean, constraints, { factor: 4, specific: 10 }).weights).assets);
        };
        expect(at(1 - 1e-4)).toEqual(Array.from(base.assets));
        expect(at(1 + 1e-4)).not.toEqual(Array.from(base.assets));
        checked++;
      }
    });
    expect(checked).toBeGreaterThan(3);
  });

  it('uses the views’ standard errors (annualised) where views are given', async () => {
    const v = valid(capped({ views: { mean: [0.006, 0.008, 0.01], stdErr: [0.001, 0.002, 0.003] } }));
    const r = await optimizeProposal(v.proposal, v.warnings);
    expect(r.methods[0].forecastSensitivity?.map((x) => x.stdErr)).toEqual([0.012, 0.024, 0.036]);
  });

  it('is the same in the stress report as in optimize (no resampling involved), for scenario Kelly too', async () => {
    const input = historyProposal(60, { compare: [{ name: 'kelly', fraction: 0.5 }, { name: 'risk-parity' }], constraints: { longOnly: true, upper: 0.6 } });
    const v = valid(input);
    const optimized = await optimizeProposal(v.proposal, v.warnings);
    const report = ReportSchema.parse(await stressProposal(v.proposal, v.warnings, { draws: 20 }));
    expect(report.methods.map((m) => m.forecastSensitivity)).toEqual(optimized.methods.map((m) => m.forecastSensitivity));
    const kellyRows = report.methods[1].forecastSensitivity as ForecastSensitivity[];
    expect(kellyRows.some((x) => x.shiftTolerance > 0)).toBe(true);
    expect(kellyRows.every((x) => x.dWeightsDMean === undefined)).toBe(true);
  });

  it('feeds the forecast-break-even-std-errs policy metric: the smallest shift in standard errors, exact (stdErr 0)', async () => {
    const v = valid(capped({ resampling: { draws: 20, seed: 'fs' } }));
    const policy = PolicySchema.parse({ rules: [{ metric: 'forecast-break-even-std-errs', min: 0.5 }] });
    const report = await checkProposal(v.proposal, v.warnings, policy, undefined);
    const rows = report.methods[0].forecastSensitivity as ForecastSensitivity[];
    const smallest = Math.min(...rows.flatMap((x) => [x.shiftUpStdErrs, x.shiftDownStdErrs]).filter((x): x is number => x !== null));
    const rule = report.verdict?.rules[0];
    expect(rule?.value).toBe(smallest);
    expect(rule?.stdErr).toBe(0);
    expect(rule?.pass).toBe(smallest >= 0.5);
    const strict = judge(report, PolicySchema.parse({ rules: [{ metric: 'forecast-break-even-std-errs', min: smallest * 1.01 }] }));
    expect(strict.pass).toBe(false);
    // A method that ignores the means has nothing hinging on a forecast: the cap, which passes.
    const free = judge(report, PolicySchema.parse({ rules: [{ metric: 'forecast-break-even-std-errs', method: 'minimum-variance', min: 3 }] }));
    expect(free.rules[0].value).toBe(BREAK_EVEN_CAP_STD_ERRS);
    expect(free.pass).toBe(true);
  });
});

describe('the work of the table', () => {
  it('is counted in meta.workUnits, and a table that would exceed the work limit is skipped with a warning', async () => {
    const v = valid(capped({ resampling: { draws: 20, seed: 'fs' } }));
    const plan = planStress(v.proposal, v.warnings);
    const report = await stressProposal(v.proposal, v.warnings);
    const groups = plan.problem.constraints.groups;
    const shape: RequestShape = {
      n: 3,
      rows: 0,
      factors: 0,
      inputKind: 'dense-moments',
      covarianceEstimator: 'sample',
      factorModel: 'none',
      repair: false,
      groups: groups.length,
      groupMemberships: groups.reduce((total, g) => total + g.members.length, 0),
      inputNumbers: 0,
      assetIdChars: 0,
      methods: plan.problem.methods,
      draws: 1,
      scheme: 'parametric',
      singular: false,
      singularDraws: false,
      scenarioKelly: false,
    };
    const expected = forecastSensitivityOps([plan.problem.methods[0]], shape) + forecastSensitivityOps([plan.problem.methods[2]], shape);
    expect(report.meta.workUnits).toBe(Math.round(plan.workUnits + expected));
    const full = forecastSensitivityTables(plan.problem, plan.base, plan.baseScenarios, LIMITS.maxWorkUnits - 1);
    expect(full.tables.every((t) => t === undefined)).toBe(true);
    expect(full.warnings.map((w) => w.code)).toEqual(['forecast-sensitivity-skipped', 'forecast-sensitivity-skipped']);
    expect(full.workUnits).toBe(0);
  });
});

describe('breakEvenFindings', () => {
  const row = (asset: string, up: number | null, down: number | null, changesUp: ForecastSensitivity['changesUp'] = [], changesDown: ForecastSensitivity['changesDown'] = []): ForecastSensitivity => ({
    asset,
    stdErr: 0.02,
    shiftUp: up === null ? null : up * 0.02,
    shiftDown: down === null ? null : down * 0.02,
    shiftUpStdErrs: up,
    shiftDownStdErrs: down,
    turnoverPerStdErr: { up: 0.1, down: 0.2 },
    changesUp,
    changesDown,
    shiftTolerance: 0,
  });

  it('ranks the fragile forecasts, smallest first, and says what changes in plain words', () => {
    const f = breakEvenFindings('mean-variance', [
      row('bonds', 0.8, null, [{ kind: 'group', name: 'defensive', from: 'inside', to: 'upper', limit: 0.5 }]),
      row('commodities', 3, 0.4, [], [{ kind: 'asset', name: 'commodities', from: 'inside', to: 'lower', limit: 0 }]),
      row('cash', 5, 7),
    ]);
    expect(f.map((x) => x.asset)).toEqual(['commodities', 'bonds']);
    expect(f[0].message).toBe(
      'commodities: its forecast falling by 0.40 standard errors (0.80% a year) takes it out of the allocation; a one-standard-error fall would trade 20.0% of the portfolio under mean-variance.',
    );
    expect(f[1].message).toContain('takes the defensive group to its maximum of 50.0%');
  });

  it('says how robust the pattern is when no forecast is fragile', () => {
    const f = breakEvenFindings('kelly', [row('a', 2.5, null, [{ kind: 'asset', name: 'b', from: 'lower', to: 'inside', limit: 0 }]), row('b', null, 4)]);
    expect(f).toHaveLength(1);
    expect(f[0].code).toBe('forecast-break-even-robust');
    expect(f[0].message).toBe('kelly: no position changes unless a return forecast moves by at least 2.5 standard errors (smallest: a, 5.0% a year up).');
  });
});
