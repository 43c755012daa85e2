import { describe, expect, it } from 'vitest';
import { validateProposal } from '../../src/schema/validate.js';
import { assertFiniteReport, NonFiniteReportError } from '../../src/stress/finite-guard.js';
import { optimizeProposal } from '../../src/stress/run.js';
import { classifyError } from '../../src/stress/errors.js';
import { historyProposal } from '../helpers/proposals.js';

describe('finiteness guard on every report', () => {
  it('passes a finite report through unchanged and names the first non-finite number', () => {
    const report = { a: 1, b: [0, { c: -2.5 }], d: 'text', e: null, f: Float64Array.from([1, 2]) };
    expect(assertFiniteReport(report)).toBe(report);
    expect(() => assertFiniteReport({ a: [1, { b: Number.NaN }] })).toThrow(/report\.a\[1\]\.b/);
    expect(() => assertFiniteReport({ w: Float64Array.from([0, Infinity]) })).toThrow(NonFiniteReportError);
  });

  it('is an internal error: not mapped to a 4xx (HTTP answers 500, the CLI exits 3)', () => {
    expect(classifyError(new NonFiniteReportError('report.x'))).toBeUndefined();
  });

  it('a zero-variance optimum (singular covariance) reports finite risk shares with a warning', async () => {
    // Three rows for four assets: minimum variance finds a riskless combination.
    const v = validateProposal(historyProposal(3, { method: { name: 'minimum-variance' }, compare: [] }));
    if (!v.ok) throw new Error(JSON.stringify(v.problems));
    const result = await optimizeProposal(v.proposal, v.warnings);
    const base = result.methods[0].base;
    expect(base.riskContributions.every(Number.isFinite)).toBe(true);
    expect(Number.isFinite(base.diversificationRatio)).toBe(true);
    if (base.volatility === 0) expect(base.warnings.map((w) => w.code)).toContain('zero-variance-portfolio');
  });
});
