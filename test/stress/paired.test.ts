import { describe, expect, it } from 'vitest';
import { PolicySchema } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { metricByBatch, pairedStdErr } from '../../src/stress/paired.js';
import { checkProposal, stressRun } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';

function valid(riskAversion: number) {
  const v = validateProposal(historyProposal(80, { method: { name: 'mean-variance', riskAversion }, resampling: { draws: 300, seed: 'crn' } }));
  if (!v.ok) throw new Error('invalid');
  return v;
}

describe('paired (common random numbers) errors for a baseline', () => {
  it('per-batch metrics average to about the full-sample figure', async () => {
    const v = valid(5);
    const { report, run } = await stressRun(v.proposal, v.warnings);
    const batches = metricByBatch(run, 'turnover-from-proposal.mean', 'mean-variance');
    expect(batches).toBeDefined();
    const mean = Array.from(batches ?? []).reduce((a, b) => a + b, 0) / (batches?.length ?? 1);
    // Batches are equal-sized here (300 draws, 30 batches), so the mean of batch means is the overall mean.
    expect(mean).toBeCloseTo(report.methods[0].turnoverFromProposal.mean, 10);
    expect(metricByBatch(run, 'mean-driven-share', 'mean-variance')).toBeUndefined();
  });

  it('a small model change is judged with a much smaller error than the unpaired one', async () => {
    const base = valid(5);
    const cand = valid(5.5);
    const a = await stressRun(cand.proposal, cand.warnings);
    const b = await stressRun(base.proposal, base.warnings);
    for (const metric of ['turnover-from-proposal.mean', 'max-weight-sd', 'volatility-band-width'] as const) {
      const paired = pairedStdErr(a.run, b.run, metric, 'mean-variance');
      const ea = metric === 'turnover-from-proposal.mean' ? a.report.methods[0].turnoverFromProposal.stdErr : metric === 'max-weight-sd' ? a.report.methods[0].maxWeightSd.stdErr : a.report.proposal.volatilityBandWidth.stdErr;
      const eb = metric === 'turnover-from-proposal.mean' ? b.report.methods[0].turnoverFromProposal.stdErr : metric === 'max-weight-sd' ? b.report.methods[0].maxWeightSd.stdErr : b.report.proposal.volatilityBandWidth.stdErr;
      expect(paired, metric).toBeDefined();
      expect(paired as number, metric).toBeLessThan(Math.hypot(ea, eb));
    }
    // The proposal's own volatility does not depend on the method's risk aversion at all: identical draws, zero error.
    expect(pairedStdErr(a.run, b.run, 'volatility-band-width', 'mean-variance')).toBe(0);
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
