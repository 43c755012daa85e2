import { describe, expect, it } from 'vitest';
import {
  bandPosition,
  formatBasisPoints,
  formatCount,
  formatFixed,
  formatPercent,
  formatPercentileRank,
  formatPercentRange,
  formatPercentWithError,
  formatRuleFigure,
  formatRuleValue,
  formatScientific,
  medianError,
  methodDraws,
  methodLabel,
  proposalMethod,
  shareStdErr,
  trimNumber,
} from '../../src/render/format.js';
import { sampleReport } from '../helpers/sample-report.js';

describe('number formatting', () => {
  it('writes fractions as percentages with a fixed number of decimals', () => {
    // A weight of 0.1234 is 12.34 % (definition of per cent); one decimal rounds to 12.3 %.
    expect(formatPercent(0.1234)).toBe('12.3%');
    expect(formatPercent(0.1234, 2)).toBe('12.34%');
    expect(formatPercent(1)).toBe('100.0%');
    expect(formatPercent(0.5, 0)).toBe('50%');
    expect(formatPercent(-0.25)).toBe('-25.0%');
  });

  it('never shows a sign on a value that rounds to zero', () => {
    expect(formatPercent(-0.00001)).toBe('0.0%');
    expect(formatPercent(-0)).toBe('0.0%');
    expect(formatFixed(-0.04, 1)).toBe('0.0');
    expect(formatFixed(-0.06, 1)).toBe('-0.1');
  });

  it('says n/a for numbers that are not finite instead of printing NaN or Infinity', () => {
    expect(formatPercent(Number.NaN)).toBe('n/a');
    expect(formatPercent(Number.POSITIVE_INFINITY)).toBe('n/a');
    expect(formatBasisPoints(Number.NaN)).toBe('n/a');
    expect(formatScientific(Number.NaN)).toBe('n/a');
    expect(formatCount(Number.NaN)).toBe('n/a');
  });

  it('writes basis points as 1/10 000 (market convention: 1 bp = 0.01 %)', () => {
    expect(formatBasisPoints(0.0123)).toBe('123 bp');
    expect(formatBasisPoints(0.0001)).toBe('1 bp');
    expect(formatBasisPoints(0.00005, 1)).toBe('0.5 bp');
  });

  it('puts the standard error beside the value, in the same unit', () => {
    expect(formatPercentWithError(0.27, 0.0028)).toBe('27.0% ± 0.3%');
    expect(formatPercentRange(0.021, 0.253)).toBe('2.1% – 25.3%');
  });

  it('formats ranks, residuals, counts and parameters', () => {
    expect(formatPercentileRank(97.5)).toBe('98');
    expect(formatPercentileRank(2.4)).toBe('2');
    expect(formatScientific(3.2e-13)).toBe('3.2e-13');
    expect(formatScientific(0)).toBe('0');
    expect(formatCount(1234567)).toBe('1,234,567');
    expect(formatCount(-1200)).toBe('-1,200');
    expect(formatCount(999)).toBe('999');
    expect(trimNumber(0.5)).toBe('0.5');
    expect(trimNumber(4)).toBe('4');
    expect(trimNumber(1 / 3)).toBe('0.333333');
  });
});

describe('statistics helpers', () => {
  it('binomial standard error of a share is √(p(1−p)/n)', () => {
    // Standard error of a sample proportion (any statistics text): p = 0.5, n = 100 → 0.05.
    expect(shareStdErr(0.5, 100)).toBeCloseTo(0.05, 15);
    expect(shareStdErr(0.1, 900)).toBeCloseTo(0.01, 15);
    expect(shareStdErr(1, 500)).toBe(0);
    expect(shareStdErr(0.5, 0)).toBeNaN();
  });

  it("uses the median's own error when the report has it, and flags the fallback to the mean's", () => {
    expect(medianError({ mean: 1, stdErr: 0.1, p05: 0, p50: 1, p95: 2, p50StdErr: 0.2 })).toEqual({ stdErr: 0.2, isMeanError: false });
    expect(medianError({ mean: 1, stdErr: 0.1, p05: 0, p50: 1, p95: 2 })).toEqual({ stdErr: 0.1, isMeanError: true });
  });

  it('places a weight below, inside or above its band (band edges count as inside)', () => {
    expect(bandPosition(0.01, 0.02, 0.05)).toBe('below');
    expect(bandPosition(0.02, 0.02, 0.05)).toBe('inside');
    expect(bandPosition(0.05, 0.02, 0.05)).toBe('inside');
    expect(bandPosition(0.06, 0.02, 0.05)).toBe('above');
  });
});

describe('method labels and the proposal method', () => {
  it('labels each method with its parameters', () => {
    expect(methodLabel({ name: 'mean-variance', riskAversion: 4 })).toBe('mean-variance (λ = 4)');
    expect(methodLabel({ name: 'mean-variance', riskAversion: { factor: 3, specific: 8 } })).toBe('mean-variance (λf = 3, λs = 8)');
    expect(methodLabel({ name: 'kelly', fraction: 0.5 })).toBe('kelly (f = 0.5)');
    expect(methodLabel({ name: 'kelly' })).toBe('kelly (full)');
    expect(methodLabel({ name: 'risk-parity', budgets: [0.5, 0.5] })).toBe('risk-parity (budgets)');
    expect(methodLabel({ name: 'equal-weight' })).toBe('equal-weight');
  });

  it("finds the proposal's method by its spec, else by name, else reports none", () => {
    const report = sampleReport();
    expect(proposalMethod(report)?.method).toEqual({ name: 'mean-variance', riskAversion: 4 });

    const byName = sampleReport();
    byName.proposal.method = { name: 'kelly', fraction: 0.25 };
    expect(proposalMethod(byName)?.method).toEqual({ name: 'kelly', fraction: 0.5 });

    const missing = sampleReport();
    missing.methods = missing.methods.filter((m) => m.method.name !== 'mean-variance');
    expect(proposalMethod(missing)).toBeUndefined();
  });

  it('counts the draws a method used: completed minus its failures', () => {
    const report = sampleReport();
    const kelly = report.methods.find((m) => m.method.name === 'kelly');
    expect(kelly).toBeDefined();
    expect(methodDraws(report, kelly!)).toBe(report.meta.drawsCompleted - kelly!.failedDraws);
  });
});

describe('verdict figures in their metric’s unit', () => {
  it('break-even rules are in standard errors, every other metric a percentage', () => {
    expect(formatRuleValue('forecast-break-even-std-errs', 1.3, 0)).toBe('1.30 se ± 0.00 se');
    expect(formatRuleFigure('forecast-break-even-std-errs', 2)).toBe('2.00 se');
    expect(formatRuleValue('turnover-from-proposal.p50', 0.123, 0.004)).toBe('12.30% ± 0.40%');
    expect(formatRuleValue('max-weight-sd', 0.05, null)).toBe('5.00% ± n/a');
  });
});
