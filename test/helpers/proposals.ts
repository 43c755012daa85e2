import { readFileSync } from 'node:fs';
import type { ProposalInput } from '../../src/schema/proposal.js';

/** The committed demo proposal (an invented scenario). */
export function demoProposal(): ProposalInput {
  return JSON.parse(readFileSync(new URL('../../schemas/examples/demo-proposal.json', import.meta.url), 'utf8')) as ProposalInput;
}

/** A small moments proposal: three assets (the EX3 example of REFERENCES.md, per period). */
export function momentsProposal(overrides: Partial<ProposalInput> = {}): ProposalInput {
  const sd = [0.15, 0.2, 0.25];
  const corr = [
    [1, 0.3, 0.2],
    [0.3, 1, 0.4],
    [0.2, 0.4, 1],
  ];
  return {
    assets: ['a', 'b', 'c'],
    weights: [0.5, 0.3, 0.2],
    inputs: {
      mean: [0.08, 0.1, 0.12],
      covariance: corr.map((row, i) => row.map((c, j) => c * sd[i] * sd[j])),
      observations: 120,
      periodsPerYear: 1,
    },
    method: { name: 'mean-variance', riskAversion: 5 },
    ...overrides,
  };
}

/** Park–Miller minimal standard generator (as in the shared reference fixtures), for small test histories. */
export function parkMiller(seed: number): () => number {
  let s = seed;
  return () => {
    s = (16807 * s) % 2147483647;
    return s / 2147483647;
  };
}

/**
 * A small return history proposal: T rows of N assets, Gaussian-ish returns with distinct means
 * and volatilities (test data only; invented).
 */
export function historyProposal(rows = 60, overrides: Partial<ProposalInput> = {}): ProposalInput {
  const u = parkMiller(12345);
  const normal = () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
  const means = [0.006, 0.005, 0.004, 0.003];
  const vols = [0.05, 0.04, 0.03, 0.02];
  const returns: number[][] = [];
  for (let t = 0; t < rows; t++) {
    const common = normal();
    returns.push(means.map((m, i) => Number((m + vols[i] * (0.5 * common + 0.866 * normal())).toFixed(6))));
  }
  return {
    assets: ['w', 'x', 'y', 'z'],
    weights: [0.25, 0.25, 0.25, 0.25],
    inputs: { returns, periodsPerYear: 12 },
    method: { name: 'mean-variance', riskAversion: 5 },
    resampling: { draws: 120, seed: 'test' },
    ...overrides,
  };
}
