import { describe, expect, it } from 'vitest';
import { PolicySchema } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { counterpartIndex, pairedStdErr } from '../../src/stress/paired.js';
import { checkProposal, stressRun } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';

function valid(riskAversion: number) {
  const v = validateProposal(historyProposal(80, { method: { name: 'mean-variance', riskAversion }, resampling: { draws: 300, seed: 'crn' } }));
  if (!v.ok) throw new Error('invalid');
  return v;
}

describe('paired (common random numbers) errors for a baseline', () => {
  it('the paired error of identical runs is exactly 0, and methods are matched by their full spec', async () => {
    const v = valid(5);
    const a = await stressRun(v.proposal, v.warnings);
    const b = await stressRun(v.proposal, v.warnings);
    const spec = a.run.plan.problem.methods[0];
    for (const metric of ['turnover-from-proposal.p50', 'turnover-from-proposal.mean', 'volatility-band-width', 'outside-band-share', 'max-weight-sd', 'mean-driven-share'] as const) {
      expect(pairedStdErr(a.run, b.run, metric, spec), metric).toBe(0);
    }
    // Kelly f = ½ is not Kelly f = 1: with both in the baseline, each finds its own counterpart.
    const specs = [{ name: 'mean-variance', riskAversion: 5 }, { name: 'kelly' }, { name: 'kelly', fraction: 0.5 }] as const;
    expect(counterpartIndex(specs, { name: 'kelly', fraction: 0.5 }, 2)).toBe(2);
    expect(counterpartIndex(specs, { name: 'kelly' }, 1)).toBe(1);
    // Ambiguous (two Kelly specs, neither matching): no guess.
    expect(counterpartIndex(specs, { name: 'kelly', fraction: 0.25 }, 1)).toBe(-1);
    // The proposal's own method changed (a new risk aversion): compared with the method it replaces.
    expect(counterpartIndex(specs, { name: 'mean-variance', riskAversion: 6 }, 0)).toBe(0);
  });

  it('a small model change is judged with a much smaller error than the unpaired one', async () => {
    const base = valid(5);
    const cand = valid(5.5);
    const a = await stressRun(cand.proposal, cand.warnings);
    const b = await stressRun(base.proposal, base.warnings);
    for (const metric of ['turnover-from-proposal.mean', 'max-weight-sd', 'volatility-band-width'] as const) {
      const paired = pairedStdErr(a.run, b.run, metric, a.run.plan.problem.methods[0]);
      const ea = metric === 'turnover-from-proposal.mean' ? a.report.methods[0].turnoverFromProposal.stdErr : metric === 'max-weight-sd' ? a.report.methods[0].maxWeightSd.stdErr : a.report.proposal.volatilityBandWidth.stdErr;
      const eb = metric === 'turnover-from-proposal.mean' ? b.report.methods[0].turnoverFromProposal.stdErr : metric === 'max-weight-sd' ? b.report.methods[0].maxWeightSd.stdErr : b.report.proposal.volatilityBandWidth.stdErr;
      expect(paired, metric).toBeDefined();
      expect(paired as number, metric).toBeLessThan(Math.hypot(ea as number, eb as number));
    }
    // The proposal's own volatility does not depend on the method's risk aversion at all: identical draws, zero error.
    expect(pairedStdErr(a.run, b.run, 'volatility-band-width', a.run.plan.problem.methods[0])).toBe(0);
  });

  it('checkProposal uses the paired error for maxIncrease against a baseline proposal, and says so', async () => {
    const base = valid(5);
    const cand = valid(5.5);
    const policy = PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.mean', maxIncrease: 0.5 }] });
    const r = await checkProposal(cand.proposal, cand.warnings, policy, { kind: 'proposal', proposal: base.proposal, warnings: base.warnings });
    expect(r.verdict?.rules[0].message).toMatch(/paired over common random numbers/);
    const unpaired = await checkProposal(cand.proposal, cand.warnings, policy, { kind: 'report', report: (await stressRun(base.proposal, base.warnings)).report });
    expect(unpaired.verdict?.rules[0].message).toMatch(/unpaired error/);
    expect(r.verdict?.rules[0].value).toBe(unpaired.verdict?.rules[0].value);
    expect(r.verdict?.rules[0].stdErr).toBeLessThan(unpaired.verdict?.rules[0].stdErr ?? 0);
  });
});
