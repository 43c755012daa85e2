import { describe, expect, it } from 'vitest';
import type { ForecastSensitivity, MethodReport, Report } from '../../src/schema/report.js';
import { HEADLINE_THRESHOLDS, forecastBreakEven, summarise } from '../../src/stress/headline.js';
import { validateProposal } from '../../src/schema/validate.js';
import { stressProposal } from '../../src/stress/run.js';
import { momentsProposal } from '../helpers/proposals.js';
import { sampleReport } from '../helpers/sample-report.js';

/** The sample report with its own method's base optimum set to `base` (and the rest as is). */
function withOwnBase(r: Report, base: number[]): Report {
  const methods = r.methods.map((m, k) => (k === 0 ? { ...m, base: { ...m.base, weights: base } } : m));
  return { ...r, methods };
}

describe('summarise: the headline', () => {
  it('says first that a 1/N proposal declared as mean-variance is not that optimum, with the one-way turnover to it', () => {
    const r = sampleReport({ withVerdict: false });
    const n = r.assets.length;
    const equal = r.assets.map(() => 1 / n);
    const mvBase = r.methods[0].base.weights;
    const s = summarise({ ...r, proposal: { ...r.proposal, weights: equal } });
    // One-way turnover ½Σ|a_i − b_i| (the contract's definition), worked out here independently.
    let hand = 0;
    for (let i = 0; i < n; i++) hand += Math.abs(equal[i] - mvBase[i]);
    hand /= 2;
    expect(s.statedOptimumTurnover).toBeCloseTo(hand, 10);
    expect(hand).toBeGreaterThan(HEADLINE_THRESHOLDS.statedOptimumTurnover);
    expect(s.sentences[0]).toBe(
      `The proposal is not the mean-variance (λ = 4) optimum on its own inputs (it is ${(hand * 100).toFixed(1)}% one-way turnover away from it), so what follows describes the re-optimised weights and where the proposal sits among them.`,
    );
    expect(s.headline.startsWith(s.sentences[0])).toBe(true);
  });

  it('leaves that sentence out when the proposal is its method optimum', () => {
    const r = sampleReport({ withVerdict: false });
    const s = summarise(withOwnBase(r, [...r.proposal.weights]));
    expect(s.statedOptimumTurnover).toBe(0);
    expect(s.sentences).toHaveLength(2);
    expect(s.sentences[0]).toMatch(/^Under mean-variance \(λ = 4\), 78% ± 2% of the variability of the re-optimised weights comes from the return forecasts; re-optimising on resampled inputs would trade a median \d+\.\d% ± \d+\.\d% of the portfolio\.$/);
  });

  it('gives the median turnover with the median error when the report has it', () => {
    const r = sampleReport({ withVerdict: false });
    const own = r.methods[0];
    const t = { ...own.turnoverFromProposal, p50: 0.3419, p50StdErr: 0.0123, stdErr: 0.5 };
    const s = summarise(withOwnBase({ ...r, methods: [{ ...own, turnoverFromProposal: t }, ...r.methods.slice(1)] }, [...r.proposal.weights]));
    expect(s.headline).toContain('a median 34.2% ± 1.2% of the portfolio');
  });

  it('names the smallest forecast change in standard errors only when forecastSensitivity is present', () => {
    const r = sampleReport({ withVerdict: false });
    expect(summarise(r).forecastBreakEven).toBeNull();
    expect(summarise(r).headline).not.toContain('standard errors');
    const row = (asset: string, up: number | null, down: number | null): ForecastSensitivity => ({
      asset,
      stdErr: 0.01,
      shiftUp: up === null ? null : up * 0.01,
      shiftDown: down === null ? null : down * 0.01,
      shiftUpStdErrs: up,
      shiftDownStdErrs: down,
      turnoverPerStdErr: { up: 0.01, down: 0.052 },
      changesUp: [],
      changesDown: [],
      shiftTolerance: 0,
    });
    const sensitivity = [row(r.assets[0], 2.0, null), row(r.assets[3], 1.0, 0.4), row(r.assets[5], null, null)];
    const own: MethodReport = { ...r.methods[0], forecastSensitivity: sensitivity };
    expect(forecastBreakEven(own)).toEqual({ asset: r.assets[3], direction: 'down', stdErrs: 0.4, turnoverPerStdErr: 0.052 });
    const s = summarise({ ...r, methods: [own, ...r.methods.slice(1)] });
    expect(s.headline).toContain(`moving ${r.assets[3]}'s return forecast down by 0.40 standard errors already changes which positions of the optimum sit at a bound (a one-standard-error move would trade 5.2%)`);
  });

  it('calls risk stable only when the volatility band is at most a quarter of the base volatility', () => {
    const r = sampleReport({ withVerdict: false });
    const base = r.proposal.volatility.base;
    const at = (width: number) => summarise({ ...r, proposal: { ...r.proposal, volatilityBandWidth: { value: width, stdErr: 0.001 } } });
    expect(at(0.25 * base).riskStable).toBe(true);
    expect(at(0.25 * base).headline).toContain('Risk is stable:');
    expect(at(0.26 * base).riskStable).toBe(false);
    expect(at(0.26 * base).headline).toContain('Risk is not stable:');
  });

  it('never prints a non-zero error as ± 0: it adds decimals instead', () => {
    const r = sampleReport({ withVerdict: false });
    const s = summarise({ ...r, proposal: { ...r.proposal, volatilityBandWidth: { value: 0.01412, stdErr: 0.00031 } } });
    expect(s.headline).toContain('width 1.41 ± 0.03 points');
    expect(s.headline).not.toMatch(/± 0(\.0+)?(%| points| bp)/);
  });

  it('names a simpler method only when it loses less by more than two combined standard errors', () => {
    const r = sampleReport({ withVerdict: false });
    const own = r.methods[0];
    const setLoss = (name: string, mean: number, stdErr: number) => (m: MethodReport) =>
      m.method.name === name ? { ...m, certaintyEquivalentLoss: { ...m.certaintyEquivalentLoss, mean, stdErr } } : m;
    const ownLoss = { ...own.certaintyEquivalentLoss, mean: 0.01, stdErr: 0.001 };
    const others = r.methods.slice(1).map((m) => ({ ...m, certaintyEquivalentLoss: { ...m.certaintyEquivalentLoss, mean: 0.02, stdErr: 0.001 } }));
    const clear = [{ ...own, certaintyEquivalentLoss: ownLoss }, ...others.map(setLoss('minimum-variance', 0.006, 0.001))];
    // 0.010 − 0.006 = 0.004 > 2·√(0.001² + 0.001²) ≈ 0.00283
    const s = summarise({ ...r, methods: clear });
    expect(s.simplerMethod).toBe('minimum-variance');
    expect(s.headline).toContain('minimum-variance, which ignores the forecasts, would have lost less: 60 ± 10 bp a year of certainty-equivalent return against 100 ± 10 bp');
    // 0.010 − 0.008 = 0.002 < 0.00283: noise.
    const close = [{ ...own, certaintyEquivalentLoss: ownLoss }, ...others.map(setLoss('minimum-variance', 0.008, 0.001))];
    const t = summarise({ ...r, methods: close });
    expect(t.simplerMethod).toBeNull();
    expect(t.headline).toContain('no method that ignores the forecasts would have lost clearly less at this sample size');
  });

  it('for a method that ignores the forecasts, says so instead of a mean-driven share', () => {
    const r = sampleReport({ withVerdict: false });
    const rp = r.methods.find((m) => m.method.name === 'risk-parity')!;
    const s = summarise({ ...r, proposal: { ...r.proposal, method: rp.method, weights: [...rp.base.weights] }, methods: [rp, ...r.methods.filter((m) => m !== rp)] });
    expect(s.statedOptimumTurnover).toBe(0);
    expect(s.sentences[0]).toMatch(/^Risk-parity ignores the return forecasts, so all the variability of its re-optimised weights comes from the covariance estimates;/);
    expect(s.simplerMethod).toBeNull();
  });

  it('writes per-asset notes about the re-optimised weights and the proposal percentile', () => {
    const r = sampleReport({ withVerdict: false });
    const s = summarise(r);
    expect(s.assetNotes).toHaveLength(r.assets.length);
    r.methods[0].weights.forEach((b, i) => {
      const outside = r.proposal.weights[i] < b.p05 || r.proposal.weights[i] > b.p95;
      expect(s.assetNotes[i].includes('the band, at percentile')).toBe(outside);
    });
    for (const note of s.assetNotes) expect(note).not.toMatch(/depends mainly on its return forecast/);
  });
});

describe('summary of a real stress run', () => {
  it('a 1/N proposal declared as mean-variance: says first how far it is from that optimum, and words findings about the re-optimised weights', async () => {
    const v = validateProposal(momentsProposal({ weights: [1 / 3, 1 / 3, 1 / 3], resampling: { draws: 200, seed: 'one-over-n' } }));
    if (!v.ok) throw new Error(JSON.stringify(v.problems));
    const report = await stressProposal(v.proposal, v.warnings);
    const base = report.methods[0].base.weights;
    // One-way turnover ½Σ|1/3 − w*_i| to the mean-variance optimum, worked out here from the report's own base optimum.
    const hand = base.reduce((s, w) => s + Math.abs(1 / 3 - w), 0) / 2;
    expect(report.summary.statedOptimumTurnover).toBeCloseTo(hand, 9);
    expect(report.summary.sentences[0]).toMatch(/^The proposal is not the mean-variance \(λ = 5\) optimum on its own inputs \(it is \d+\.\d% one-way turnover away from it\)/);
    expect(Object.keys(report)[0]).toBe('summary');
    for (const f of report.findings) {
      expect(f.message).not.toMatch(/\(proposed [\d.]+%\) depends/);
      if (f.code === 'weight-driven-by-mean-forecast') expect(f.message).toMatch(/^The re-optimised weights of .* depend mainly on the return forecasts: .*; the proposed 33\.3% sits at percentile \d+ of them\.$/);
    }
  });
});
