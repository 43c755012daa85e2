import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import type { ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { optimizeProposal } from '../../src/stress/run.js';

// Open data: monthly prices of five stocks in the npm package vega-datasets 3.2.1 (BSD-3-Clause,
// data/stocks.csv), turned into 67 monthly simple returns. Reference optima computed by
// scripts/reference/vega_stocks_reference.py with general-purpose solvers (cvxpy 1.9.3 + CLARABEL,
// cross-checked by scipy SLSQP; risk parity by scipy on Spinu's objective; half Kelly by SLSQP then
// Newton on the support's KKT system). This test runs wobble's whole optimize path — validation,
// estimation from the history, every method — on those returns.
interface Optimum {
  weights: number[];
  objective: { value: number };
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/vega-stocks.json', import.meta.url), 'utf8')) as {
  assets: string[];
  returns: number[][];
  optima: Record<'minimumVariance' | 'meanVariance' | 'riskParity' | 'inverseVolatility' | 'equalWeight' | 'kelly' | 'kellyHalf', Optimum>;
};

async function optimize(extra: Partial<ProposalInput> = {}) {
  const n = fixture.assets.length;
  const proposal: ProposalInput = {
    assets: fixture.assets,
    weights: fixture.assets.map(() => 1 / n),
    inputs: { returns: fixture.returns, periodsPerYear: 12 },
    method: { name: 'mean-variance', riskAversion: 5 },
    compare: [{ name: 'minimum-variance' }, { name: 'kelly' }, { name: 'kelly', fraction: 0.5 }, { name: 'risk-parity' }, { name: 'equal-weight' }, { name: 'inverse-volatility' }],
    estimation: { covariance: 'sample' },
    ...extra,
  };
  const v = validateProposal(proposal);
  if (!v.ok) throw new Error(JSON.stringify(v.problems));
  return optimizeProposal(v.proposal, v.warnings);
}

function weightsOf(r: Awaited<ReturnType<typeof optimize>>, name: string, fraction?: number): number[] {
  const m = r.methods.find((x) => x.method.name === name && (fraction === undefined || (x.method as { fraction?: number }).fraction === fraction));
  if (!m) throw new Error(`no ${name}`);
  return m.base.weights;
}

function expectClose(actual: number[], expected: number[], tolerance: number): void {
  expect(actual).toHaveLength(expected.length);
  const gap = Math.max(...actual.map((a, i) => Math.abs(a - expected[i])));
  expect(gap, `weights ${actual} vs ${expected}`).toBeLessThan(tolerance);
}

describe('optimize on real monthly returns (vega-datasets stocks) against cvxpy/scipy', () => {
  it('mean-variance λ = 5 and minimum variance (long-only) match to 1e-9', async () => {
    const r = await optimize();
    expectClose(weightsOf(r, 'mean-variance'), fixture.optima.meanVariance.weights, 1e-9);
    expectClose(weightsOf(r, 'minimum-variance'), fixture.optima.minimumVariance.weights, 1e-9);
  });

  it('risk parity, inverse volatility and 1/N match to 1e-9', async () => {
    const r = await optimize();
    expectClose(weightsOf(r, 'risk-parity'), fixture.optima.riskParity.weights, 1e-9);
    expectClose(weightsOf(r, 'inverse-volatility'), fixture.optima.inverseVolatility.weights, 1e-12);
    expectClose(weightsOf(r, 'equal-weight'), fixture.optima.equalWeight.weights, 1e-15);
  });

  it('scenario Kelly (log utility) and half Kelly (CRRA γ = 2) match the reference optima', async () => {
    const r = await optimize();
    expectClose(weightsOf(r, 'kelly', undefined), fixture.optima.kelly.weights, 1e-9);
    expectClose(weightsOf(r, 'kelly', 0.5), fixture.optima.kellyHalf.weights, 1e-8);
  });

  it('reports annualised risk figures consistent with the reference variance', async () => {
    const r = await optimize();
    const mv = r.methods.find((m) => m.method.name === 'minimum-variance');
    // Annualised volatility √(12·wᵀSw) (common practice: √12 for monthly data).
    expect(mv?.base.volatility).toBeCloseTo(Math.sqrt(12 * fixture.optima.minimumVariance.objective.value), 10);
    const shares = mv?.base.riskContributions ?? [];
    expect(shares.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    expect(mv?.base.diagnostics.kktResidual).toBeLessThan(1e-9);
  });
});
