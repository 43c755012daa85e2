import { describe, expect, it } from 'vitest';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { OptimizeResponseSchema, ReportSchema } from '../../src/schema/report.js';
import { SAMPLE_ASSETS, sampleOptimizeResponse, sampleReport } from '../helpers/sample-report.js';

// The renderers are tested on a synthetic report; these checks keep that report honest.
describe('the synthetic sample report used by the renderer tests', () => {
  it('is a valid Report and a valid OptimizeResponse under the contract schemas', () => {
    expect(() => ReportSchema.parse(sampleReport())).not.toThrow();
    expect(() => ReportSchema.parse(sampleReport({ withVerdict: false }))).not.toThrow();
    expect(() => OptimizeResponseSchema.parse(sampleOptimizeResponse())).not.toThrow();
  });

  it('has ten assets, six methods, the standard cautions and a failing verdict', () => {
    const r = sampleReport();
    expect(r.assets).toEqual(SAMPLE_ASSETS);
    expect(r.methods.map((m) => m.method.name)).toEqual(['mean-variance', 'minimum-variance', 'kelly', 'risk-parity', 'equal-weight', 'inverse-volatility']);
    expect(r.cautions).toEqual(CAUTIONS);
    expect(r.verdict?.pass).toBe(false);
    expect(r.verdict?.rules.some((rule) => rule.pass)).toBe(true);
  });

  it('is internally consistent: ordered bands, budgets of one, Euler contributions summing to one', () => {
    const r = sampleReport();
    for (const m of r.methods) {
      // Weights sum to the budget of 1.
      expect(m.base.weights.reduce((s, w) => s + w, 0)).toBeCloseTo(1, 12);
      // Euler risk contributions w_i(Σw)_i / wᵀΣw sum to one (Tasche 2008).
      expect(m.base.riskContributions.reduce((s, c) => s + c, 0)).toBeCloseTo(1, 12);
      // 1/Σw² is at most N and at least 1 (definition of effective holdings).
      expect(m.base.effectiveHoldings).toBeGreaterThanOrEqual(1);
      expect(m.base.effectiveHoldings).toBeLessThanOrEqual(r.assets.length + 1e-9);
      for (const b of m.weights) {
        expect(b.p05).toBeLessThanOrEqual(b.p25);
        expect(b.p25).toBeLessThanOrEqual(b.p50);
        expect(b.p50).toBeLessThanOrEqual(b.p75);
        expect(b.p75).toBeLessThanOrEqual(b.p95);
      }
      expect(m.turnoverFromProposal.p05).toBeLessThanOrEqual(m.turnoverFromProposal.p95);
    }
    // Equal weight: turnover from the proposal is ½Σ|1/N − w_i| exactly (no spread).
    const equal = r.methods.find((m) => m.method.name === 'equal-weight');
    const expected = 0.5 * r.proposal.weights.reduce((s, w) => s + Math.abs(0.1 - w), 0);
    expect(equal?.turnoverFromProposal.p50).toBeCloseTo(expected, 12);
  });

  it('puts exactly one proposed weight outside the mean-variance band (emerging-equity)', () => {
    const r = sampleReport();
    const mv = r.methods[0];
    const outside = mv.weights.filter((b, i) => r.proposal.weights[i] < b.p05 || r.proposal.weights[i] > b.p95).map((b) => b.asset);
    expect(outside).toEqual(['emerging-equity']);
    expect(mv.outsideBandShare.value).toBeCloseTo(0.1, 15);
  });

  it('accepts replacement asset ids for escaping tests', () => {
    const ids = SAMPLE_ASSETS.map((a, i) => (i === 0 ? '<script>alert(1)</script>' : a));
    const r = sampleReport({ assets: ids });
    expect(ReportSchema.parse(r).assets[0]).toBe('<script>alert(1)</script>');
    expect(r.methods.every((m) => m.weights[0].asset === ids[0])).toBe(true);
    expect(() => sampleReport({ assets: ['a', 'b'] })).toThrow();
  });
});
