import { describe, expect, it } from 'vitest';
import { ReportSchema } from '../../src/schema/report.js';
import { validateProposal } from '../../src/schema/validate.js';
import { optimizeProposal, stressProposal } from '../../src/stress/run.js';
import { checkLimits } from '../../src/stress/engine.js';
import type { ProposalInput } from '../../src/schema/proposal.js';
import { demoProposal, historyProposal, momentsProposal } from '../helpers/proposals.js';
import { parkMiller } from '../helpers/reference-data.js';

function valid(p: ProposalInput) {
  const v = validateProposal(p);
  if (!v.ok) throw new Error(JSON.stringify(v.problems));
  return v;
}

const withoutElapsed = (r: { meta: { elapsedMs: number } }) => JSON.stringify({ ...r, meta: { ...r.meta, elapsedMs: 0 } });

describe('stressProposal', () => {
  it('is deterministic: the same seed gives byte-identical JSON (apart from elapsedMs), another seed differs', async () => {
    const v = valid(historyProposal());
    const a = await stressProposal(v.proposal, v.warnings, { clock: () => performance.now() });
    const b = await stressProposal(v.proposal, v.warnings);
    expect(withoutElapsed(a)).toBe(withoutElapsed(b));
    const c = await stressProposal(v.proposal, v.warnings, { seed: 'another' });
    expect(withoutElapsed(c)).not.toBe(withoutElapsed(a));
    expect(ReportSchema.parse(a)).toBeTruthy();
  });

  it('gives the same report when the draws are computed in separate ranges and merged', async () => {
    const v = valid(historyProposal());
    const whole = await stressProposal(v.proposal, v.warnings);
    for (const rangeSize of [1, 7, 50]) {
      const split = await stressProposal(v.proposal, v.warnings, { rangeSize });
      expect(withoutElapsed(split)).toBe(withoutElapsed(whole));
    }
  });

  it('reports a high mean-driven share for mean-variance and exactly 0 for minimum variance when means are noisy', async () => {
    // EX3 scaled to monthly moments (μ/12, Σ/12), T = 60. For unconstrained mean-variance, first-order perturbation of
    // w = Σ⁻¹(μ − η1)/λ gives Var from mean noise ∝ σ²/(λ²σ⁴T) and from covariance noise ∝ 2μ²/(λ²σ⁴T), so the
    // mean-driven share is about σ²/(σ² + 2μ²) = 1/(1 + 2·SR²) with SR the per-period Sharpe ratio (~0.15 here):
    // about 0.95. This is the effect Chopra & Ziemba (1993) quantify: errors in means matter far more.
    const base = momentsProposal();
    const inputs = base.inputs as { mean: number[]; covariance: number[][] };
    const monthly = {
      mean: inputs.mean.map((m) => m / 12),
      covariance: inputs.covariance.map((r) => r.map((c) => c / 12)),
      observations: 60,
      periodsPerYear: 12,
    };
    const v = valid(momentsProposal({ inputs: monthly, constraints: { longOnly: false }, resampling: { draws: 300, seed: 7 } }));
    const r = await stressProposal(v.proposal, v.warnings);
    const mv = r.methods.find((m) => m.method.name === 'mean-variance');
    const minVar = r.methods.find((m) => m.method.name === 'minimum-variance');
    expect(mv?.meanDrivenShare.overall).toBeGreaterThan(0.85);
    expect(minVar?.meanDrivenShare.overall).toBe(0);
    expect(minVar?.meanDrivenShare.perAsset).toEqual([0, 0, 0]);
    expect(r.meta.scheme).toBe('parametric');
  });

  it('names the assets whose mean-weight error rests on 1–4 draws and reports that error as null', async () => {
    // Demo, 200 draws: minimum variance holds high-yield credit and commodities in only a few draws.
    const v = valid({ ...demoProposal(), resampling: { ...demoProposal().resampling, draws: 200, seed: 'weights-rare' } });
    const r = await stressProposal(v.proposal, v.warnings);
    expect(ReportSchema.safeParse(r).success).toBe(true);
    const warning = r.warnings.find((w) => w.code === 'weight-error-not-estimable' && w.message.startsWith('minimum-variance:'));
    expect(warning?.message).toMatch(/2 assets leave their usual weight .* in only 1–4 of 200 draws \(high-yield-credit, commodities\)/);
    const minimumVariance = r.methods.find((m) => m.method.name === 'minimum-variance');
    for (const asset of ['high-yield-credit', 'commodities']) {
      const w = minimumVariance?.weights.find((x) => x.asset === asset);
      expect(w?.meanStdErr === null || w?.selectionRateStdErr === null, asset).toBe(true);
    }
    // Assets whose weight moves in many draws keep their errors; one pinned in every draw has exactly 0.
    const moving = minimumVariance?.weights.filter((x) => x.sd > 0 && x.meanStdErr !== null && x.meanStdErr > 0) ?? [];
    expect(moving.length).toBeGreaterThan(1);
    for (const x of minimumVariance?.weights ?? []) if (x.sd === 0) expect(x.meanStdErr).toBe(0);
  });

  it('places a proposal equal to the base optimum near the middle of its bands', async () => {
    const base = valid(momentsProposal({ constraints: { longOnly: false }, resampling: { draws: 400, seed: 3 } }));
    const optimum = await optimizeProposal(base.proposal, base.warnings);
    const weights = optimum.methods[0].base.weights;
    const v = valid(momentsProposal({ weights, constraints: { longOnly: false }, resampling: { draws: 400, seed: 3 } }));
    const r = await stressProposal(v.proposal, v.warnings);
    for (const w of r.methods[0].weights) {
      // Unconstrained mean-variance is linear in μ, so the base optimum is the centre of a symmetric distribution (up to Wishart skew).
      expect(w.proposalPercentile).toBeGreaterThan(25);
      expect(w.proposalPercentile).toBeLessThan(75);
    }
    expect(r.methods[0].outsideBandShare.value).toBe(0);
  });

  it('carries cautions, findings and the turnover and CE-loss figures for every method', async () => {
    const v = valid(historyProposal());
    const r = await stressProposal(v.proposal, v.warnings);
    expect(r.cautions.join(' ')).toMatch(/not investment advice/);
    expect(r.methods.map((m) => m.method.name)).toEqual(['mean-variance', 'minimum-variance', 'kelly', 'risk-parity', 'equal-weight', 'inverse-volatility']);
    const ew = r.methods.find((m) => m.method.name === 'equal-weight');
    // 1/N ignores the inputs: its weights never move.
    expect(ew?.turnoverFromBase.p95).toBe(0);
    expect(ew?.weights.every((w) => w.sd === 0)).toBe(true);
    // The CE loss is measured against mean-variance at the base inputs, so mean-variance's own base optimum scores 0 and
    // every other fixed portfolio scores ≥ 0 (it is the maximiser of the same objective over the same set).
    expect(ew?.certaintyEquivalentLoss.mean).toBeGreaterThanOrEqual(0);
    expect(r.proposal.expectedShortfall95?.base).toBeGreaterThan(0);
    expect(r.meta.meanBlockLength).toBeGreaterThanOrEqual(1);
  });

  it('names a supplied singular covariance and prices it as singular after validation too', async () => {
    // c = a + b exactly: rank 2 of 3, so the long-only mix (½, ½, …) direction a + b − c has no risk.
    const cov = [
      [0.04, 0.01, 0.05],
      [0.01, 0.09, 0.1],
      [0.05, 0.1, 0.15],
    ];
    const v = valid(momentsProposal({ inputs: { mean: [0.05, 0.07, 0.12], covariance: cov, observations: 60, periodsPerYear: 1 } }));
    expect(v.warnings.map((w) => w.code)).toContain('singular-covariance');
    expect(valid(momentsProposal()).warnings.map((w) => w.code)).not.toContain('singular-covariance');
    // The engine's own price of the request matches validation's (singular), not the definite one.
    expect(checkLimits('optimize', v.proposal, 1, { warnings: v.warnings })).toBeGreaterThan(checkLimits('optimize', v.proposal, 1));
    const r = await optimizeProposal(v.proposal, v.warnings);
    expect(r.warnings.map((w) => w.code)).toContain('singular-covariance');
  });

  it("reports the base estimator's figures, e.g. the Ledoit–Wolf shrinkage intensity", async () => {
    const v = valid(historyProposal(60, { estimation: { covariance: 'ledoit-wolf' }, resampling: { draws: 20, seed: 1 } }));
    const r = await stressProposal(v.proposal, v.warnings);
    // Ledoit & Wolf (2004): the intensity lies in [0, 1]; with 60 rows and 4 assets it is small but positive.
    expect(r.meta.baseEstimation.shrinkage).toBeGreaterThan(0);
    expect(r.meta.baseEstimation.shrinkage).toBeLessThan(1);
  });

  it('refuses work over the limits, naming the limit', async () => {
    const v = valid(historyProposal());
    await expect(stressProposal(v.proposal, v.warnings, { draws: 10_000 })).rejects.toThrow(/maxDraws/);
  });

  it('refuses an oversized request by its counted work before estimating anything', async () => {
    // 400 assets × 500 rows with scenario Kelly in every channel: far over the work budget. The refusal
    // comes from counting, so it must not depend on running (or timing) the estimation first.
    const n = 400;
    const u = parkMiller(99);
    const returns = Array.from({ length: 500 }, () => Array.from({ length: n }, () => 0.02 * (u() - 0.5)));
    const p = valid({
      assets: Array.from({ length: n }, (_, i) => `a${i}`),
      weights: Array.from({ length: n }, () => 1 / n),
      inputs: { returns, periodsPerYear: 12 },
      method: { name: 'kelly' },
      estimation: { factorModel: 'pca', pcaFactors: 5 },
    });
    await expect(stressProposal(p.proposal, p.warnings)).rejects.toThrow(/maxWorkUnits/);
  });
});
