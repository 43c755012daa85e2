import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { findArbitrage } from '../../src/optimize/arbitrage.js';
import { estimateMultipliers, kktReport } from '../../src/optimize/kkt.js';
import { minimumVarianceProblem } from '../../src/optimize/minimum-variance.js';
import { createParametricScratch, createResampledRiskModel, drawParametricInputs } from '../../src/resample/parametric.js';
import { ACCEPTED_KKT_RESIDUAL, OptimizationError, type ConstraintSet } from '../../src/optimize/types.js';
import { PolicySchema, type ProposalInput } from '../../src/schema/proposal.js';
import type { Report } from '../../src/schema/report.js';
import { validateProposal } from '../../src/schema/validate.js';
import { TooManyFailuresError } from '../../src/stress/engine.js';
import { classifyError } from '../../src/stress/errors.js';
import { checkProposal, optimizeProposal, stressProposal, stressRun } from '../../src/stress/run.js';

// Invented reproducers of known defects (test/fixtures/cases/, copied from the shared cases).
function loadCase(name: string): ProposalInput {
  return JSON.parse(readFileSync(new URL(`../fixtures/cases/${name}.json`, import.meta.url), 'utf8')) as ProposalInput;
}

function valid(p: ProposalInput) {
  const v = validateProposal(p);
  if (!v.ok) throw new Error(JSON.stringify(v.problems));
  return v;
}

/** Every reported optimum claims convergence only with a residual within the accepted tolerance. */
function expectHonestDiagnostics(report: Omit<Report, 'verdict'>): void {
  for (const m of report.methods) {
    if (m.base.diagnostics.converged && m.base.diagnostics.solver !== 'newton' && !m.base.diagnostics.solver.startsWith('newton') && !m.base.diagnostics.solver.startsWith('coordinate')) {
      expect(m.base.diagnostics.kktResidual, m.method.name).toBeLessThanOrEqual(ACCEPTED_KKT_RESIDUAL);
    }
  }
}

describe('D1: Monte Carlo errors on a history case', () => {
  it('point masses have an error of exactly 0; every error is a number except a mean-driven share resting on rare draws', async () => {
    const v = valid(loadCase('D1-mc-error-history'));
    const { report, run } = await stressRun(v.proposal, v.warnings, { draws: 200 });
    expect(report.meta.monteCarloError).toMatch(/order-statistic/);
    expect(report.meta.monteCarloError).toMatch(/reported as null/);
    const ew = report.methods.find((m) => m.method.name === 'equal-weight');
    expect(ew).toBeDefined();
    // 1/N never moves: all its weight errors are 0, not a small positive number.
    for (const w of ew?.weights ?? []) {
      expect([w.bandStdErr, w.meanStdErr, w.p50StdErr, w.selectionRateStdErr]).toEqual([0, 0, 0, 0]);
    }
    // A weight whose draws are tied around the percentile (here: pinned at a bound) gets 0 exactly.
    let pinned = 0;
    run.plan.problem.methods.forEach((_, k) => {
      const rows = run.acc.methods[k].weights.rows();
      const n = run.plan.problem.n;
      const summary = run.acc.methods[k].weights.summarize(run.plan.problem.proposalWeights);
      summary.perAsset.forEach((a, i) => {
        const column = Float64Array.from({ length: 200 }, (_, b) => rows[b * n + i]).sort();
        // Ranks 0..32 cover p05 ± 7 sds of rank at n = 200 (5 % + 7·1.54 % = 15.8 %, position 32):
        // tied there, no plausible rerun moves the percentile.
        if (column[0] === column[32]) {
          expect(a.p05StdErr, `${k}/${i}`).toBe(0);
          pinned++;
        }
      });
    });
    expect(pinned).toBeGreaterThan(0);
    for (const m of report.methods) {
      expect(m.outsideBandShare.stdErr).not.toBeNull();
      for (const w of m.weights) expect(w.p50StdErr).not.toBeNull();
      // Full Kelly sits at a corner that the covariance-only channel changes in about 1 draw of
      // several thousand: the share is 1 in these draws, but its error cannot be read from them.
      if (m.method.name === 'kelly' && (m.method.fraction ?? 1) === 1) expect(m.meanDrivenShare.stdErr).toBeNull();
      else expect(m.meanDrivenShare.stdErr, JSON.stringify(m.method)).not.toBeNull();
    }
    const notEstimable = report.warnings.filter((w) => w.code === 'mean-driven-share-not-estimable');
    expect(notEstimable).toHaveLength(1);
    expect(notEstimable[0].message).toMatch(/^kelly: .*covariance-only 0\.0.*never moved .* at least 334 draws would be needed, possibly far more/);
  });

  it('an outside-band share that no seed can change has error 0; one near a band edge does not', async () => {
    const v = valid(loadCase('D1-mc-error-history'));
    const a = await stressProposal(v.proposal, v.warnings, { draws: 200, seed: 'a' });
    const b = await stressProposal(v.proposal, v.warnings, { draws: 200, seed: 'b' });
    a.methods.forEach((m, k) => {
      if (m.outsideBandShare.stdErr === 0 && b.methods[k].outsideBandShare.stdErr === 0) {
        expect(b.methods[k].outsideBandShare.value, m.method.name).toBe(m.outsideBandShare.value);
      }
    });
    expect(a.methods.some((m) => (m.outsideBandShare.stdErr ?? 0) > 0)).toBe(true);
  });

  it('Kelly f = 1 and f = ½ are judged on their own figures against a baseline', async () => {
    const v = valid(loadCase('D1-mc-error-history'));
    const policy = PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.mean', method: 'kelly', maxIncrease: 0.05 }] });
    const r = await checkProposal(v.proposal, v.warnings, policy, { kind: 'proposal', proposal: v.proposal, warnings: v.warnings }, { draws: 100 });
    // Same proposal, same seed: the difference and its paired error are exactly 0.
    expect(r.verdict?.rules[0].value).toBe(0);
    expect(r.verdict?.rules[0].stdErr).toBe(0);
    const kellyHalf = r.methods.find((m) => m.method.name === 'kelly' && m.method.fraction === 0.5);
    const kellyFull = r.methods.find((m) => m.method.name === 'kelly' && m.method.fraction !== 0.5);
    expect(kellyHalf?.turnoverFromProposal.mean).not.toBe(kellyFull?.turnoverFromProposal.mean);
  });
});

describe('D3: Kelly on scenarios that admit an arbitrage', () => {
  it('the proposal is refused (422) with the arbitrage named, never reported with huge weights', async () => {
    const v = valid(loadCase('D3-kelly-unbounded-silent'));
    const error = await stressProposal(v.proposal, v.warnings).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(TooManyFailuresError);
    const mapped = classifyError(error);
    expect(mapped?.status).toBe(422);
    expect(mapped?.detail).toMatch(/arbitrage/);
  });

  it('as a compared method, its unbounded draws are failed draws with the reason, and no reported weight is huge', async () => {
    const input = { ...loadCase('D3-kelly-unbounded-silent'), method: { name: 'equal-weight' as const }, compare: [{ name: 'kelly' as const }] };
    const v = valid(input);
    const report = await stressProposal(v.proposal, v.warnings);
    const kelly = report.methods.find((m) => m.method.name === 'kelly');
    expect(kelly).toBeDefined();
    expect(kelly?.failedDraws).toBeGreaterThan(100);
    expect(report.meta.failedDraws).toBe(kelly?.failedDraws);
    expect(report.meta.failureReasons.some((r) => r.method === 'kelly' && /unbounded: Kelly has no optimum: the scenarios admit an arbitrage/.test(r.reason))).toBe(true);
    expect(report.warnings.some((w) => w.code === 'failed-draws')).toBe(true);
    // Before: weights of ±1.8e18 and a CE loss of 1.5e33 from unconverged Newton iterates. What is left are
    // genuine (if very leveraged: six rows, shorts unbounded) optima of draws without an arbitrage.
    for (const w of kelly?.weights ?? []) for (const x of [w.p05, w.p50, w.p95, w.mean]) expect(Math.abs(x)).toBeLessThan(1e4);
    expect(Math.abs(kelly?.certaintyEquivalentLoss.mean ?? Infinity)).toBeLessThan(1e12);
  });

  it('the arbitrage LP: found with shorts allowed, absent when long-only (no direction can grow without bound)', () => {
    // Two scenarios where asset 0 beats asset 1 in both: long 0 / short 1 never loses (a textbook arbitrage).
    const scenarios = Float64Array.of(0.1, 0.05, 0.02, -0.01);
    const free: ConstraintSet = { n: 2, lower: Float64Array.of(-Infinity, -Infinity), upper: Float64Array.of(Infinity, Infinity), budget: 1, groups: [] };
    const found = findArbitrage(scenarios, 2, free);
    expect(found).toBeDefined();
    expect(found?.direction[0]).toBeGreaterThan(0);
    expect(found?.direction[1]).toBeLessThan(0);
    const longOnly: ConstraintSet = { ...free, lower: Float64Array.of(0, 0) };
    expect(findArbitrage(scenarios, 2, longOnly)).toBeUndefined();
    // No arbitrage when each asset wins in one scenario.
    expect(findArbitrage(Float64Array.of(0.1, -0.05, -0.02, 0.03), 2, free)).toBeUndefined();
  });
});

describe('D4: fewer observations than assets (moments input)', () => {
  it('warns which estimator copes, and counts unsolvable draws as failed with reasons', async () => {
    const v = valid(loadCase('D4-nonconverged-draws-silent'));
    const report = await stressProposal(v.proposal, v.warnings);
    const few = report.warnings.find((w) => w.code === 'few-observations');
    expect(few?.message).toMatch(/6 observations for 10 assets/);
    expect(few?.message).toMatch(/factor model/);
    expect(report.meta.failedDraws).toBeGreaterThan(0);
    const reasons = report.meta.failureReasons;
    expect(reasons.some((r) => r.method === 'risk-parity')).toBe(true);
    const rp = report.methods.find((m) => m.method.name === 'risk-parity');
    expect(rp?.failedDraws).toBeGreaterThan(0);
    expectHonestDiagnostics(report);
  });

  it('minimum variance solves every singular Wishart draw, and each accepted draw meets the four KKT conditions', async () => {
    // Before: 51 of 200 draws stopped at the QP's 200-iteration cap (rounding-sized ridge steps along
    // the flat face of a riskless optimum) and were counted as failed. Every draw's covariance is
    // singular (6 observations, 10 assets), so zero-risk long-only portfolios are common.
    const v = valid(loadCase('D4-nonconverged-draws-silent'));
    const { report, run } = await stressRun(v.proposal, v.warnings);
    const minimumVariance = report.methods.find((m) => m.method.name === 'minimum-variance');
    expect(minimumVariance?.failedDraws).toBe(0);
    expect(report.meta.failureReasons.filter((r) => r.method === 'minimum-variance')).toEqual([]);

    // Audit the weights the engine accepted, draw by draw, against the draw's own covariance
    // (redrawn from the same seeded stream) with multipliers estimated from the weights alone
    // (kkt.ts, independent of the solver; Nocedal & Wright Thm 12.1).
    const { plan } = run;
    const parametric = plan.parametric;
    if (!parametric) throw new Error('D4 is a moments case: the parametric scheme is expected');
    // Accumulators follow the methods kept at planning (those with a base optimum).
    const k = plan.solution.kept.indexOf(plan.problem.methods.findIndex((m) => m.name === 'minimum-variance'));
    expect(k).toBeGreaterThanOrEqual(0);
    const rows = run.acc.methods[k].weights.rows();
    const n = plan.problem.n;
    const risk = createResampledRiskModel(parametric);
    const scratch = createParametricScratch(parametric);
    let audited = 0;
    for (let b = 0; b < plan.draws; b++) {
      drawParametricInputs(plan.seed, b, parametric, null, risk, scratch);
      const problem = minimumVarianceProblem(risk, plan.problem.constraints);
      const w = rows.slice(b * n, (b + 1) * n);
      const kkt = kktReport(problem, w, estimateMultipliers(problem, w));
      for (const [name, value] of Object.entries({ stationarity: kkt.stationarity, primal: kkt.primalFeasibility, dual: kkt.dualFeasibility, complementarity: kkt.complementarity })) {
        expect(value, `draw ${b} ${name}`).toBeLessThanOrEqual(ACCEPTED_KKT_RESIDUAL);
      }
      audited++;
    }
    expect(audited).toBe(200);
  });
});

describe('D5: a constant return column (variance ~1e-36)', () => {
  it('names the asset, leaves out the methods that cannot use it, and never claims a residual of 1 converged', async () => {
    const v = valid(loadCase('D5-zero-variance-cash'));
    const report = await stressProposal(v.proposal, v.warnings);
    const warning = report.warnings.find((w) => w.code === 'near-zero-variance');
    expect(warning?.message).toMatch(/A5/);
    const excluded = report.warnings.filter((w) => w.code === 'method-excluded').map((w) => w.message);
    expect(excluded.some((m) => /^inverse-volatility/.test(m) && /A5/.test(m))).toBe(true);
    expect(excluded.some((m) => /^risk-parity/.test(m) && /A5/.test(m))).toBe(true);
    expect(report.methods.map((m) => m.method.name)).not.toContain('inverse-volatility');
    for (const m of report.methods) {
      if (m.base.diagnostics.converged) expect(m.base.diagnostics.kktResidual).toBeLessThanOrEqual(ACCEPTED_KKT_RESIDUAL);
    }
    // Minimum variance is solved, not left out: its optimum is the riskless corner, all in A5
    // (wᵀΣw ≈ 1e-36 is the least variance any portfolio can have), with its KKT conditions met
    // on a scale that means something there (kkt.ts), in the base solve and in every draw.
    expect(excluded.some((m) => /^minimum-variance/.test(m))).toBe(false);
    const minimumVariance = report.methods.find((m) => m.method.name === 'minimum-variance');
    expect(minimumVariance?.base.diagnostics.converged).toBe(true);
    expect(minimumVariance?.base.diagnostics.kktResidual).toBeLessThanOrEqual(ACCEPTED_KKT_RESIDUAL);
    expect(minimumVariance?.base.weights).toEqual([0, 0, 0, 0, 1]);
    expect(minimumVariance?.failedDraws).toBe(0);
    expect(minimumVariance?.weights[4].p05).toBeCloseTo(1, 12);
    // The warning says minimum variance treats A5 as riskless: the reader learns why it is all in A5.
    expect(warning?.message).toMatch(/minimum variance .* treat it as riskless/);
  });

  it('as the proposal method, risk parity is refused with a 422 naming the asset', async () => {
    const v = valid({ ...loadCase('D5-zero-variance-cash'), method: { name: 'risk-parity' } });
    const error = await optimizeProposal(v.proposal, v.warnings).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(OptimizationError);
    expect(classifyError(error)?.detail).toMatch(/A5 has variance/);
  });
});

describe('D6: risk parity with a perfectly hedged pair', () => {
  it('is refused with a 422 that says why no equal-risk portfolio exists', async () => {
    const v = valid(loadCase('D6-rp-no-erc-converged'));
    for (const run of [() => stressProposal(v.proposal, v.warnings), () => optimizeProposal(v.proposal, v.warnings)]) {
      const error = await run().then(
        () => undefined,
        (e: unknown) => e,
      );
      const mapped = classifyError(error);
      expect(mapped?.status).toBe(422);
      expect(mapped?.detail).toMatch(/risk parity has no solution/);
      expect(mapped?.detail).toMatch(/A, B has zero risk/);
    }
  });

  it('as a compared method it is left out with the reason, and the rest of the report stands', async () => {
    const v = valid({ ...loadCase('D6-rp-no-erc-converged'), method: { name: 'inverse-volatility' }, compare: [{ name: 'risk-parity' }] });
    const report = await stressProposal(v.proposal, v.warnings);
    expect(report.methods.map((m) => m.method.name)).toEqual(['inverse-volatility']);
    expect(report.warnings.find((w) => w.code === 'method-excluded')?.message).toMatch(/risk-parity .*zero risk/);
  });
});
