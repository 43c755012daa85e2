import { readFileSync } from 'node:fs';
import type { ProposalInput } from '../../src/schema/proposal.js';
import { EX3_MEANS, ex3CovarianceRows, parkMiller } from './reference-data.js';

/** The committed demo proposal (an invented scenario). */
export function demoProposal(): ProposalInput {
  return JSON.parse(readFileSync(new URL('../../schemas/examples/demo-proposal.json', import.meta.url), 'utf8')) as ProposalInput;
}

/** A small moments proposal: three assets (the EX3 example of REFERENCES.md, per period). */
export function momentsProposal(overrides: Partial<ProposalInput> = {}): ProposalInput {
  return {
    assets: ['a', 'b', 'c'],
    weights: [0.5, 0.3, 0.2],
    inputs: {
      mean: [...EX3_MEANS],
      covariance: ex3CovarianceRows(),
      observations: 120,
      periodsPerYear: 1,
    },
    method: { name: 'mean-variance', riskAversion: 5 },
    ...overrides,
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
