import { describe, expect, it } from 'vitest';
import {
  decomposeRisk,
  diversificationRatioOf,
  assetVolatilitiesInto,
  effectiveNumberOfBets,
  riskContributionSharesInto,
} from '../../src/optimize/risk-decomposition.js';
import { constantCorrelation, denseFromVolsAndCorrelation, ex3Model, ex4fModel } from '../helpers/reference-data.js';

// Outside checks for the risk decomposition metrics (values in the project's shared REFERENCES.md).

// EX3 of REFERENCES.md: σ = (0.15, 0.20, 0.25), correlation [[1,.3,.2],[.3,1,.4],[.2,.4,1]].
const EX3 = ex3Model();
const W = Float64Array.of(0.5, 0.3, 0.2);

describe('Euler risk contributions (Tasche 2008, arXiv:0708.2542)', () => {
  it('EX3, w = (0.5, 0.3, 0.2): σ = 0.13536986370680884 and the published shares', () => {
    // Values computed with numpy from RC_i = w_i(Σw)_i/σ (REFERENCES.md, "Risk decomposition").
    const d = decomposeRisk(EX3, W);
    expect(Math.abs(d.volatility - 0.13536986370680884)).toBeLessThan(1e-15);
    const expected = [0.421555252387, 0.335607094134, 0.242837653479];
    for (let i = 0; i < 3; i++) expect(Math.abs(d.contributionShares[i] - expected[i])).toBeLessThan(1e-12);
    // Euler's theorem for a degree-1 homogeneous risk measure: Σ RC_i = σ.
    const sum = d.contributions.reduce((a, b) => a + b, 0);
    expect(Math.abs(sum - d.volatility)).toBeLessThan(1e-16);
    const shares = new Float64Array(3);
    const sigma = riskContributionSharesInto(EX3, W, shares);
    expect(Math.abs(sigma - 0.13536986370680884)).toBeLessThan(1e-15);
    for (let i = 0; i < 3; i++) expect(Math.abs(shares[i] - expected[i])).toBeLessThan(1e-12);
  });
});

describe('diversification ratio (Choueifaty & Coignard 2008)', () => {
  it('equal weights, equal vols, constant ρ: √(N/(1+(N−1)ρ)); N = 4, ρ = 0.5 → 1.2649110641', () => {
    // Choueifaty & Coignard (2008), J. Portfolio Management 35(1); value in REFERENCES.md.
    const n = 4;
    const model = denseFromVolsAndCorrelation([0.2, 0.2, 0.2, 0.2], constantCorrelation(n, 0.5));
    const w = new Float64Array(n).fill(0.25);
    const dr = decomposeRisk(model, w).diversificationRatio;
    expect(Math.abs(dr - 1.2649110641)).toBeLessThan(1e-10);
    expect(Math.abs(dr - Math.sqrt(n / (1 + (n - 1) * 0.5)))).toBeLessThan(1e-14);
    // Same value from the allocation-free variant.
    const vols = assetVolatilitiesInto(model, new Float64Array(n));
    expect(Math.abs(diversificationRatioOf(model, w, vols, new Float64Array(n)) - dr)).toBeLessThan(1e-15);
  });

  it('EX3, w = (0.5, 0.3, 0.2) → 1.366626182033', () => {
    // Computed value in REFERENCES.md from wᵀσ/√(wᵀΣw).
    expect(Math.abs(decomposeRisk(EX3, W).diversificationRatio - 1.366626182033)).toBeLessThan(1e-11);
  });
});

describe('effective number of bets (Meucci 2009, Risk 22(5))', () => {
  it('EX3, w = (0.5, 0.3, 0.2) → 2.126322209058', () => {
    // Computed value in REFERENCES.md: exp(−Σ p_n ln p_n), p_n = (e_nᵀw)²λ_n/wᵀΣw.
    expect(Math.abs(effectiveNumberOfBets(EX3, W) - 2.126322209058)).toBeLessThan(1e-11);
    expect(Math.abs((decomposeRisk(EX3, W).effectiveBets ?? NaN) - 2.126322209058)).toBeLessThan(1e-11);
  });

  it('uncorrelated assets with equal risk contributions carry N equal bets', () => {
    // Meucci (2009): the entropy is largest, N bets, when variance is spread evenly over the
    // principal components; for a diagonal Σ with distinct variances these are the assets.
    const vols = [0.1, 0.15, 0.22, 0.3, 0.45];
    const model = denseFromVolsAndCorrelation(vols, constantCorrelation(vols.length, 0));
    const inv = vols.map((s) => 1 / s);
    const total = inv.reduce((a, b) => a + b, 0);
    expect(Math.abs(effectiveNumberOfBets(model, inv.map((v) => v / total)) - vols.length)).toBeLessThan(1e-12);
    // A single holding is a single bet.
    expect(Math.abs(effectiveNumberOfBets(model, [0, 0, 1, 0, 0]) - 1)).toBeLessThan(1e-12);
  });
});

describe('factor / specific split on EX4F (REFERENCES.md factor example)', () => {
  // B, F, D of example EX4F; the split must add up to the variance of the expanded Σ = BFBᵀ + D,
  // computed here by plain loops.
  const model = ex4fModel();
  const { loadings: B, factorCov: F, specificVar: D } = model;
  const w = [0.383650128362, 0.248291923166, 0.196069786818, 0.171988161654];

  it('wᵀBFBᵀw + wᵀDw equals wᵀΣw of the expanded matrix', () => {
    let factorVar = 0;
    let total = 0;
    for (let i = 0; i < 4; i++) {
      for (let j = 0; j < 4; j++) {
        let bfb = 0;
        for (let a = 0; a < 2; a++) for (let c = 0; c < 2; c++) bfb += B[i * 2 + a] * F[a * 2 + c] * B[j * 2 + c];
        factorVar += w[i] * bfb * w[j];
        total += w[i] * (bfb + (i === j ? D[i] : 0)) * w[j];
      }
    }
    const d = decomposeRisk(model, w);
    expect(d.factorSplit).toBeDefined();
    expect(Math.abs((d.factorSplit?.factorVariance ?? NaN) - factorVar)).toBeLessThan(1e-16);
    expect(Math.abs((d.factorSplit?.specificVariance ?? NaN) - (total - factorVar))).toBeLessThan(1e-16);
    expect(Math.abs(d.variance - total)).toBeLessThan(1e-16);
    expect(Math.abs((d.factorSplit?.factorShare ?? NaN) - factorVar / total)).toBeLessThan(1e-14);
  });
});
