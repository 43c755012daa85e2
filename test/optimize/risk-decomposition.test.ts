import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import {
  assetVolatilitiesInto,
  decomposeRisk,
  diversificationRatioOf,
  EFFECTIVE_BETS_MAX_DENSE_N,
  effectiveHoldings,
  effectiveNumberOfBets,
  factorVarianceOf,
  portfolioVariance,
  portfolioVolatility,
  riskContributionSharesInto,
  riskContributionsInto,
  specificVarianceOf,
} from '../../src/optimize/risk-decomposition.js';
import { parkMiller } from '../helpers/reference-data.js';

function randomFactorModel(n: number, k: number, seed: number): FactorRiskModel {
  const u = parkMiller(seed); // Park–Miller generator (REFERENCES.md)
  const loadings = new Float64Array(n * k).map(() => 2 * u() - 0.5);
  const factorCov = new Float64Array(k * k);
  for (let a = 0; a < k; a++) factorCov[a * k + a] = 0.01 + 0.03 * u();
  if (k > 1) factorCov[1] = factorCov[k] = 0.3 * Math.sqrt(factorCov[0] * factorCov[k + 1]);
  const specificVar = new Float64Array(n).map(() => 0.002 + 0.01 * u());
  return { kind: 'factor', n, k, factorNames: Array.from({ length: k }, (_, i) => `f${i}`), loadings, factorCov, specificVar };
}

const FACTOR = randomFactorModel(12, 3, 17);
const DENSE: DenseRiskModel = { kind: 'dense', n: 12, cov: toDenseCovariance(FACTOR) };
const W = Float64Array.from({ length: 12 }, (_, i) => (i % 4 === 0 ? -0.05 : 0.1 + 0.01 * i));

describe('allocation-free variants agree with the full report', () => {
  it('variance, volatility, contributions and shares', () => {
    const full = decomposeRisk(DENSE, W);
    const scratchN = new Float64Array(12);
    const scratchK = new Float64Array(6);
    // Dense and factor products round differently: compare to 1e-13 relative.
    const tol = 1e-13 * full.volatility;
    for (const model of [DENSE, FACTOR]) {
      expect(Math.abs(portfolioVariance(model, W, scratchN, scratchK) - full.variance)).toBeLessThan(tol * full.volatility);
      expect(Math.abs(portfolioVolatility(model, W, scratchN, scratchK) - full.volatility)).toBeLessThan(tol);
      const rc = new Float64Array(12);
      const sigma = riskContributionsInto(model, W, rc, scratchK);
      const shares = new Float64Array(12);
      const sigma2 = riskContributionSharesInto(model, W, shares, scratchK);
      expect(Math.abs(sigma - full.volatility)).toBeLessThan(tol);
      expect(Math.abs(sigma2 - full.volatility)).toBeLessThan(tol);
      for (let i = 0; i < 12; i++) {
        expect(Math.abs(rc[i] - full.contributions[i])).toBeLessThan(tol);
        expect(Math.abs(shares[i] - full.contributionShares[i])).toBeLessThan(1e-13);
      }
    }
    const vols = assetVolatilitiesInto(FACTOR, new Float64Array(12));
    expect(Math.abs(diversificationRatioOf(FACTOR, W, vols, scratchN, scratchK) - full.diversificationRatio)).toBeLessThan(1e-14);
  });
});

describe('Euler decomposition (Tasche 2008, arXiv:0708.2542)', () => {
  it('marginal risk is the gradient of σ(w) (central finite differences)', () => {
    const d = decomposeRisk(DENSE, W);
    const h = 1e-6;
    const scratch = new Float64Array(12);
    for (let i = 0; i < 12; i++) {
      const up = Float64Array.from(W);
      const down = Float64Array.from(W);
      up[i] += h;
      down[i] -= h;
      const grad = (portfolioVolatility(DENSE, up, scratch) - portfolioVolatility(DENSE, down, scratch)) / (2 * h);
      expect(Math.abs(grad - d.marginalRisk[i])).toBeLessThan(1e-8);
    }
  });

  it('contributions sum to σ, shares to 1, also with short positions', () => {
    const d = decomposeRisk(FACTOR, W);
    expect(Math.abs(d.contributions.reduce((a, b) => a + b, 0) - d.volatility)).toBeLessThan(1e-15 * d.volatility);
    expect(Math.abs(d.contributionShares.reduce((a, b) => a + b, 0) - 1)).toBeLessThan(1e-14);
  });

  it('zero weights: contributions 0, shares undefined (NaN)', () => {
    const zero = new Float64Array(12);
    const rc = new Float64Array(12);
    expect(riskContributionsInto(DENSE, zero, rc)).toBe(0);
    expect(Array.from(rc)).toEqual(new Array(12).fill(0));
    const shares = new Float64Array(12);
    riskContributionSharesInto(DENSE, zero, shares);
    expect(shares.every((s) => Number.isNaN(s))).toBe(true);
  });
});

describe('concentration measures', () => {
  it('effective number of holdings: N for 1/N, 1 for a single asset (inverse Herfindahl)', () => {
    expect(effectiveHoldings(new Array(8).fill(1 / 8))).toBeCloseTo(8, 12);
    expect(effectiveHoldings([0, 1, 0])).toBe(1);
    expect(effectiveHoldings([0.5, 0.25, 0.25])).toBeCloseTo(1 / 0.375, 12);
  });

  it('diversification ratio ≥ 1 for long-only weights, = 1 for a single asset (Choueifaty & Coignard 2008)', () => {
    const longOnly = Float64Array.from({ length: 12 }, (_, i) => (i + 1) / 78);
    expect(decomposeRisk(DENSE, longOnly).diversificationRatio).toBeGreaterThanOrEqual(1);
    const single = new Float64Array(12);
    single[3] = 1;
    expect(Math.abs(decomposeRisk(DENSE, single).diversificationRatio - 1)).toBeLessThan(1e-14);
  });

  it('effective number of bets lies in [1, N] and is the same for a factor model and its dense expansion', () => {
    const longOnly = Float64Array.from({ length: 12 }, (_, i) => (i + 1) / 78);
    const enbDense = effectiveNumberOfBets(DENSE, longOnly);
    expect(enbDense).toBeGreaterThanOrEqual(1);
    expect(enbDense).toBeLessThanOrEqual(12);
    expect(Math.abs(effectiveNumberOfBets(FACTOR, longOnly) - enbDense)).toBeLessThan(1e-10);
  });

  it('skips the O(N³) effective number of bets by default above the size limit', () => {
    const n = EFFECTIVE_BETS_MAX_DENSE_N + 1;
    const big = randomFactorModel(n, 2, 5);
    const w = new Float64Array(n).fill(1 / n);
    expect(decomposeRisk(big, w).effectiveBets).toBeUndefined();
    expect(decomposeRisk(FACTOR, W, { effectiveBets: false }).effectiveBets).toBeUndefined();
  });
});

describe('factor / specific split', () => {
  it('adds up to the total variance and is absent for a dense model', () => {
    const d = decomposeRisk(FACTOR, W);
    const split = d.factorSplit;
    expect(split).toBeDefined();
    if (split === undefined) return;
    expect(Math.abs(split.factorVariance + split.specificVariance - d.variance)).toBeLessThan(1e-14 * d.variance);
    expect(Math.abs(split.factorVariance - factorVarianceOf(FACTOR, W))).toBe(0);
    expect(Math.abs(split.specificVariance - specificVarianceOf(FACTOR, W))).toBe(0);
    expect(split.factorShare).toBeGreaterThan(0);
    expect(split.factorShare).toBeLessThan(1);
    expect(decomposeRisk(DENSE, W).factorSplit).toBeUndefined();
  });

  it('rejects weights of the wrong length', () => {
    expect(() => decomposeRisk(DENSE, [0.5, 0.5])).toThrow(RangeError);
  });
});
