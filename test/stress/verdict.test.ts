import { describe, expect, it } from 'vitest';
import { PolicySchema } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { stressProposal } from '../../src/stress/run.js';
import { judge, PolicyError } from '../../src/stress/verdict.js';
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
});
