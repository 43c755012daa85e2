/**
 * Problems for `npm run bench:scale` (invented data, for timing only; generator from problems.ts).
 */
import type { ProposalInput } from '../../src/schema/proposal.js';
import { assetIds, ParkMillerNormals, TARGET_CASE, targetStressProposal } from './problems.js';

/** The threads case: the 30-asset stress target (all six methods) at 1500 draws. */
export function threadsCase(draws = 1500): ProposalInput {
  const p = targetStressProposal('all');
  return { ...p, resampling: { ...p.resampling, draws, seed: 'bench-scale' } } as ProposalInput;
}

/**
 * The large case: N assets under a supplied K-factor model (loadings 0.5 + 0.7u on the first factor,
 * ±0.3 on the others; factor variances 0.02²–0.05² monthly, uncorrelated; specific volatility 2–6 %
 * monthly; means 0.3–1 % monthly), equal proposed weights, long-only, each asset ≤ 2 %, parametric
 * resampling with 120 observations. `compare` is given by the caller (the stored-values limit
 * decides how many methods fit at N = 2000).
 */
export function factorCase(n: number, k: number, draws: number, compare: ProposalInput['compare'] = []): ProposalInput {
  const g = new ParkMillerNormals(TARGET_CASE.seed + n + k);
  const assets = assetIds(n);
  const loadings = assets.map(() => Array.from({ length: k }, (_, j) => (j === 0 ? 0.5 + 0.7 * g.uniform() : 0.6 * g.uniform() - 0.3)));
  const factorCovariance = Array.from({ length: k }, (_, i) => Array.from({ length: k }, (_, j) => (i === j ? (0.02 + 0.03 * g.uniform()) ** 2 : 0)));
  const specificVariance = assets.map(() => (0.02 + 0.04 * g.uniform()) ** 2);
  const mean = assets.map(() => 0.003 + 0.007 * g.uniform());
  return {
    assets,
    weights: assets.map(() => 1 / n),
    inputs: {
      mean,
      factorModel: { factors: Array.from({ length: k }, (_, j) => `f${j + 1}`), loadings, factorCovariance, specificVariance },
      observations: 120,
      periodsPerYear: 12,
    },
    method: { name: 'mean-variance', riskAversion: { factor: 4, specific: 4 } },
    compare,
    constraints: { longOnly: true, budget: 1, upper: 0.02 },
    resampling: { draws, scheme: 'parametric', seed: 'bench-factor' },
  } as ProposalInput;
}
