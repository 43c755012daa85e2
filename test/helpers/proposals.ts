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
