import { describe, expect, it } from 'vitest';
import type { MethodReport } from '../../src/schema/report.js';
import { findingsFor } from '../../src/stress/findings.js';
import { sampleReport } from '../helpers/sample-report.js';

function withLoss(m: MethodReport, mean: number, stdErr: number): MethodReport {
  return { ...m, certaintyEquivalentLoss: { ...m.certaintyEquivalentLoss, mean, stdErr } };
}

describe('findingsFor', () => {
  const r = sampleReport();
  const byName = (name: string) => r.methods.find((m) => m.method.name === name) as MethodReport;

  it('leaves the headline to report.summary and puts the actionable findings before the descriptive ones', () => {
    const f = findingsFor(r.assets, r.proposal.weights, r.methods, r.proposal.volatility);
    expect(f.some((x) => x.code === 'summary')).toBe(false);
    const rank = (code: string) => f.findIndex((x) => x.code === code);
    const acted = ['simpler-method-loses-less', 'forecast-break-even', 'weight-driven-by-mean-forecast'].map(rank).filter((i) => i >= 0);
    const described = ['turnover', 'proposal-volatility-band'].map(rank).filter((i) => i >= 0);
    for (const a of acted) for (const d of described) expect(a).toBeLessThan(d);
  });

  it('names a simpler method only when it loses clearly less (beyond 2 standard errors) and it ignores the forecasts', () => {
    const own = withLoss(r.methods[0], 0.03, 0.001);
    const ew = withLoss(byName('equal-weight'), 0.01, 0.001);
    const kelly = withLoss(byName('kelly'), 0.001, 0.001);
    const found = findingsFor(r.assets, r.proposal.weights, [own, kelly, ew], r.proposal.volatility).find((x) => x.code === 'simpler-method-loses-less');
    // Kelly loses least but uses the means: it is not the "simpler" alternative.
    expect(found?.method).toBe('equal-weight');
    const close = withLoss(byName('equal-weight'), 0.0285, 0.001);
    expect(findingsFor(r.assets, r.proposal.weights, [own, close], r.proposal.volatility).some((x) => x.code === 'simpler-method-loses-less')).toBe(false);
  });
});
