import { describe, expect, it } from 'vitest';
import { PolicySchema } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { checkProposal, stressProposal, stressRun } from '../../src/stress/run.js';
import { judge, PolicyError } from '../../src/stress/verdict.js';
import { figureBoundsOf } from '../../src/stress/gate-bounds.js';
import { normalQuantile } from '../../src/statistics/normal-quantile.js';
import { studentTQuantile } from '../../src/statistics/student-t-quantile.js';
import { historyProposal } from '../helpers/proposals.js';

async function report() {
  const v = validateProposal(historyProposal());
  if (!v.ok) throw new Error('invalid');
  return stressProposal(v.proposal, v.warnings);
}

describe('judge', () => {
  it('passes a rule every proposal meets and fails one none can, with value, stdErr and a sentence', async () => {
    const r = await report();
    const pass = judge(r, PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.p50', max: 1 }] }));
    expect(pass.pass).toBe(true);
    const fail = judge(r, PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] }));
    expect(fail.pass).toBe(false);
    const rule = fail.rules[0];
    expect(rule.value).toBe(r.methods[0].turnoverFromProposal.p50);
    expect(rule.stdErr).toBe(r.methods[0].turnoverFromProposal.p50StdErr);
    expect(rule.message).toMatch(/FAIL/);
  });

  it('does not fail a value beyond the threshold by less than the Monte Carlo error allows', async () => {
    const r = await report();
    const t = r.methods[0].turnoverFromProposal;
    const m = { mean: t.mean, stdErr: t.stdErr! };
    // Threshold one standard error below the value: z(0.95) = 1.645 > 1, so the excess is within noise.
    const threshold = m.mean - m.stdErr;
    const v = judge(r, PolicySchema.parse({ confidence: 0.95, rules: [{ metric: 'turnover-from-proposal.mean', max: threshold }] }));
    expect(v.pass).toBe(true);
    expect(v.rules[0].message).toMatch(/within Monte Carlo error/);
    const strict = judge(r, PolicySchema.parse({ confidence: 0.95, rules: [{ metric: 'turnover-from-proposal.mean', max: m.mean - 2 * m.stdErr }] }));
    expect(strict.pass).toBe(false);
  });

  it('reads every contract metric, for a named method', async () => {
    const r = await report();
    const metrics = ['turnover-from-proposal.p50', 'turnover-from-proposal.mean', 'outside-band-share', 'volatility-band-width', 'mean-driven-share', 'max-weight-sd'] as const;
    const v = judge(r, PolicySchema.parse({ rules: metrics.map((metric) => ({ metric, method: 'risk-parity', max: 10 })) }));
    expect(v.rules.map((x) => x.method)).toEqual(metrics.map(() => 'risk-parity'));
    expect(v.rules.find((x) => x.metric === 'mean-driven-share')?.value).toBe(0);
    expect(v.pass).toBe(true);
  });

  it('compares with a baseline for maxIncrease, and needs one', async () => {
    const r = await report();
    const policy = PolicySchema.parse({ rules: [{ metric: 'max-weight-sd', maxIncrease: 0 }] });
    expect(() => judge(r, policy)).toThrow(PolicyError);
    const same = judge(r, policy, r);
    expect(same.rules[0].value).toBe(0);
    expect(same.pass).toBe(true);
  });

  it('bounds the mean-driven share on the logit scale with Student t on the jackknife groups, inside (0, 1) and wider towards the middle', async () => {
    const r = await report();
    const k = r.methods.findIndex((m) => m.meanDrivenShare.overall > 0 && m.meanDrivenShare.overall < 1 && (m.meanDrivenShare.stdErr ?? 0) > 0);
    expect(k).toBeGreaterThanOrEqual(0);
    const m = r.methods[k];
    const v = m.meanDrivenShare.overall;
    const se = m.meanDrivenShare.stdErr as number;
    // The jackknife error comes from m = min(30, ⌊B/10⌋) groups: m − 1 degrees of freedom, so the
    // quantile is Student's t (checked against scipy.stats.t in test/reference), above Φ⁻¹.
    const groups = Math.min(30, Math.floor(r.meta.drawsRequested / 10));
    const z = studentTQuantile(0.95, groups - 1);
    expect(z).toBeGreaterThan(normalQuantile(0.95));
    const policy = PolicySchema.parse({ rules: [{ metric: 'mean-driven-share', method: m.method.name, max: 0.5 }, { metric: 'mean-driven-share', method: m.method.name, min: 0.5 }] });
    const verdict = judge(r, policy);
    // Delta method on logit(v): se_logit = se / (v(1 − v)); bounds expit(logit v ∓ z·se_logit) (Agresti 2013, §1.4; from memory).
    const expit = (x: number): number => 1 / (1 + Math.exp(-x));
    const logit = Math.log(v / (1 - v));
    expect(verdict.rules[0].bound).toBeCloseTo(expit(logit - (z * se) / (v * (1 - v))), 14);
    expect(verdict.rules[1].bound).toBeCloseTo(expit(logit + (z * se) / (v * (1 - v))), 14);
    for (const rule of verdict.rules) expect(rule.bound > 0 && rule.bound < 1).toBe(true);
    expect(verdict.rules[0].message).toMatch(/logit scale/);
    expect(verdict.rules[0].message).toContain(`Student t with ${groups - 1} degrees of freedom`);
  });

  it('reports the bound it judged on: value − z·se for a max rule, value + z·se for a min rule', async () => {
    const r = await report();
    const t = r.methods[0].turnoverFromProposal;
    const z = normalQuantile(0.9);
    const v = judge(r, PolicySchema.parse({ confidence: 0.9, rules: [{ metric: 'turnover-from-proposal.mean', max: 0.5 }, { metric: 'turnover-from-proposal.mean', min: 0.5 }] }));
    expect(v.rules[0].bound).toBeCloseTo(t.mean - z * (t.stdErr as number), 14);
    expect(v.rules[1].bound).toBeCloseTo(t.mean + z * (t.stdErr as number), 14);
    expect(v.rules[0].pass).toBe(!(v.rules[0].bound > 0.5));
    expect(v.rules[1].pass).toBe(!(v.rules[1].bound < 0.5));
    expect(v.rules[0].message).toMatch(/with 90 % confidence it is at least/);
  });
});

describe('judge: the outside-band share and the max weight sd by simultaneous bounds over the assets', () => {
  const proposal = () => {
    const v = validateProposal(historyProposal(60, { weights: [0.4, 0.3, 0.2, 0.1], resampling: { draws: 200, seed: 'gate' } }));
    if (!v.ok) throw new Error('invalid');
    return v;
  };

  it('counts the assets confidently outside (max rule) or not confidently inside (min rule), in words', async () => {
    const v = proposal();
    const { report: r, run } = await stressRun(v.proposal, v.warnings);
    const source = figureBoundsOf(run);
    const lower = source('outside-band-share', 0, 'lower', 0.05);
    const upper = source('outside-band-share', 0, 'upper', 0.05);
    if (!lower || !upper) throw new Error('bounds expected');
    expect(lower.bound).toBeLessThanOrEqual(r.methods[0].outsideBandShare.value);
    expect(upper.bound).toBeGreaterThanOrEqual(r.methods[0].outsideBandShare.value);
    const policy = PolicySchema.parse({
      rules: [
        { metric: 'outside-band-share', max: 0 },
        { metric: 'outside-band-share', min: 1 },
      ],
    });
    const verdict = judge(r, policy, undefined, undefined, { candidate: source });
    expect(verdict.rules[0].bound).toBe(lower.bound);
    expect(verdict.rules[0].pass).toBe(lower.outside === 0);
    expect(verdict.rules[0].message).toContain(`at least ${lower.outside} of 4 assets are outside their band with 95 % confidence`);
    expect(verdict.rules[1].bound).toBe(upper.bound);
    expect(verdict.rules[1].pass).toBe(upper.outside === 4);
    expect(verdict.rules[1].message).toContain(`at most ${upper.outside} of 4 assets are outside their band with 95 % confidence`);
    // checkProposal judges the same way.
    const checked = await checkProposal(v.proposal, v.warnings, policy, undefined);
    expect(checked.verdict?.rules.map((x) => [x.bound, x.pass])).toEqual(verdict.rules.map((x) => [x.bound, x.pass]));
  });

  it('bounds the max weight sd by max_i(sd_i − z(α/m)·se_i), Bonferroni over the assets with a positive sd', async () => {
    const v = proposal();
    const { report: r, run } = await stressRun(v.proposal, v.warnings);
    const per = run.acc.methods[0].weights.summarize(run.plan.problem.proposalWeights).perAsset;
    const moving = per.filter((w) => w.sd > 0);
    const z = normalQuantile(1 - 0.05 / moving.length);
    const expected = Math.max(0, ...moving.map((w) => w.sd - z * w.sdStdErr));
    const verdict = judge(r, PolicySchema.parse({ rules: [{ metric: 'max-weight-sd', max: r.methods[0].maxWeightSd.value }] }), undefined, undefined, { candidate: figureBoundsOf(run) });
    expect(verdict.rules[0].bound).toBeCloseTo(expected, 14);
    // A rule at the reported value passes: the bound sits below the (upward-biased) sample maximum.
    expect(verdict.rules[0].pass).toBe(true);
    expect(verdict.rules[0].message).toMatch(/for all assets at once, the largest weight sd is at least/);
  });

  it('bounds the median turnover by order statistics of the draws: the 88th and 113th of 200 at 95 % (min and max rules)', async () => {
    const v = proposal();
    const { report: r, run } = await stressRun(v.proposal, v.warnings, { draws: 200 });
    const sorted = Float64Array.from(run.acc.methods[0].turnoverFromProposal.slots()).sort();
    // All 200 draws succeed here. scipy.stats.binom.ppf(0.95, 200, 0.5) = 112, so the upper bound is
    // X(113); P(Bin(200, ½) ≤ 87) ≤ 0.05 < P(≤ 88), so the lower bound is X(88) (1-based).
    expect(sorted.every(Number.isFinite)).toBe(true);
    const p50 = r.methods[0].turnoverFromProposal.p50;
    const verdict = judge(
      r,
      PolicySchema.parse({ confidence: 0.95, rules: [{ metric: 'turnover-from-proposal.p50', max: p50 }, { metric: 'turnover-from-proposal.p50', min: p50 }] }),
      undefined,
      undefined,
      { candidate: figureBoundsOf(run) },
    );
    expect(verdict.rules[0].bound).toBe(sorted[87]);
    expect(verdict.rules[1].bound).toBe(sorted[112]);
    expect(verdict.pass).toBe(true);
    expect(verdict.rules[0].message).toMatch(/at least .* \(an order statistic of the draws\)/);
    // Without the per-draw data (a saved report) the bound is value − z·se.
    const saved = judge(r, PolicySchema.parse({ confidence: 0.95, rules: [{ metric: 'turnover-from-proposal.p50', max: p50 }] }));
    expect(saved.rules[0].bound).toBeCloseTo(p50 - normalQuantile(0.95) * (r.methods[0].turnoverFromProposal.p50StdErr as number), 14);
    expect(saved.rules[0].message).toMatch(/saved report/);
  });

  it('bounds the volatility band width by order statistics of p95 and p05 at α/2 each; median turnover maxIncrease by both runs at α/2', async () => {
    const v = proposal();
    const { report: r, run } = await stressRun(v.proposal, v.warnings, { draws: 200 });
    const vol = Float64Array.from(run.acc.proposalVolatility.slots()).sort();
    expect(vol.every(Number.isFinite)).toBe(true);
    // At α/2 = 0.025 (scipy.stats.binom, n = 200): p95 upper X(197) (ppf(0.975, 200, 0.95) = 196),
    // lower X(184) (P(Bin ≤ 183) ≤ 0.025 < P(Bin ≤ 184)); p05 upper X(17), lower X(4).
    const width = r.proposal.volatilityBandWidth.value;
    const verdict = judge(
      r,
      PolicySchema.parse({ confidence: 0.95, rules: [{ metric: 'volatility-band-width', max: width }, { metric: 'volatility-band-width', min: width }] }),
      undefined,
      undefined,
      { candidate: figureBoundsOf(run) },
    );
    expect(verdict.rules[0].bound).toBe(vol[183] - vol[16]);
    expect(verdict.rules[1].bound).toBe(vol[196] - vol[3]);
    expect(verdict.pass).toBe(true);
    // maxIncrease of the median turnover with both runs' draws: candidate's lower bound minus the baseline's upper, each at α/2.
    const base = await stressRun(v.proposal, v.warnings, { draws: 200, seed: 'another' });
    const candidateBounds = figureBoundsOf(run);
    const baselineBounds = figureBoundsOf(base.run);
    const increase = judge(r, PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.p50', maxIncrease: 0 }] }), base.report, () => 0.001, { candidate: candidateBounds, baseline: baselineBounds });
    const expected = (candidateBounds('turnover-from-proposal.p50', 0, 'lower', 0.025)?.bound as number) - (baselineBounds('turnover-from-proposal.p50', 0, 'upper', 0.025)?.bound as number);
    expect(increase.rules[0].bound).toBe(expected);
  });

  it('judges on the value alone, with a note, when the bound is not estimable; says so when only a saved report is at hand', async () => {
    const r = await report();
    const policy = PolicySchema.parse({ rules: [{ metric: 'outside-band-share', max: 0.1 }] });
    const none = judge(r, policy, undefined, undefined, { candidate: () => undefined });
    expect(none.rules[0].bound).toBe(r.methods[0].outsideBandShare.value);
    expect(none.rules[0].pass).toBe(!(r.methods[0].outsideBandShare.value > 0.1));
    expect(none.rules[0].message).toMatch(/not estimable: judged on the value alone/);
    const saved = judge(r, policy);
    expect(saved.rules[0].message).toMatch(/saved report/);
  });

  it('gives the same verdict, bounds included, from one range of draws as from several merged ranges', async () => {
    const v = proposal();
    const policy = PolicySchema.parse({
      rules: [
        { metric: 'outside-band-share', max: 0.25 },
        { metric: 'max-weight-sd', max: 0.1 },
        { metric: 'max-weight-sd', min: 0.5 },
      ],
    });
    const one = await checkProposal(v.proposal, v.warnings, policy, undefined);
    const split = await checkProposal(v.proposal, v.warnings, policy, undefined, { rangeSize: 50 });
    expect(JSON.stringify(split.verdict)).toBe(JSON.stringify(one.verdict));
  });

  it('maxIncrease: lower bound of the candidate minus upper bound of the baseline, each at α/2', async () => {
    const v = proposal();
    const policy = PolicySchema.parse({
      rules: [
        { metric: 'outside-band-share', maxIncrease: 0 },
        { metric: 'max-weight-sd', maxIncrease: 0 },
      ],
    });
    // Against itself: the true increase is 0, so the bound must not exceed it.
    const checked = await checkProposal(v.proposal, v.warnings, policy, { kind: 'proposal', proposal: v.proposal, warnings: v.warnings });
    const { run } = await stressRun(v.proposal, v.warnings);
    const source = figureBoundsOf(run);
    for (const [k, metric] of (['outside-band-share', 'max-weight-sd'] as const).entries()) {
      const rule = checked.verdict?.rules[k];
      const expected = (source(metric, 0, 'lower', 0.025)?.bound as number) - (source(metric, 0, 'upper', 0.025)?.bound as number);
      expect(rule?.value).toBe(0);
      expect(rule?.bound).toBeCloseTo(expected, 14);
      expect(rule?.bound).toBeLessThanOrEqual(0);
      expect(rule?.pass).toBe(true);
      expect(rule?.message).toMatch(/rose by at least/);
    }
    expect(checked.verdict?.rules[0].message).toContain('with 97.5 % confidence');
  });
});
