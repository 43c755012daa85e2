import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { binomialCdf, binomialLogPmf, binomialSurvival, logGamma } from '../../src/statistics/binomial-tail.js';

// Fixture: scripts/reference/binomial_tail_reference.py — scipy.stats.binom cdf, sf and logpmf,
// n from 2 to 20 000, p = 0.05 (the gate's band edges) and others, k across both tails.
interface Fixture {
  cases: { k: number; n: number; p: number; cdf: number; survival: number; logPmf: number }[];
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/binomial-tail.json', import.meta.url), 'utf8')) as Fixture;

/** Relative agreement for probabilities away from 0, absolute 1e-14 near 0 (the complement of a tail near 1 carries that rounding). */
function close(actual: number, expected: number): boolean {
  return Math.abs(actual - expected) <= 1e-9 * Math.abs(expected) + 1e-14;
}

describe('binomial tails agree with scipy.stats.binom', () => {
  it('P(X ≤ k), P(X ≥ k) and log f(k) over the fixture', () => {
    expect(fixture.cases.length).toBeGreaterThan(500);
    const bad: string[] = [];
    for (const c of fixture.cases) {
      const cdf = binomialCdf(c.k, c.n, c.p);
      const survival = binomialSurvival(c.k, c.n, c.p);
      const logPmf = binomialLogPmf(c.k, c.n, c.p);
      if (!close(cdf, c.cdf)) bad.push(`cdf(${c.k}; ${c.n}, ${c.p}) = ${cdf}, scipy ${c.cdf}`);
      if (!close(survival, c.survival)) bad.push(`survival(${c.k}; ${c.n}, ${c.p}) = ${survival}, scipy ${c.survival}`);
      if (Math.abs(logPmf - c.logPmf) > 1e-9 * Math.max(1, Math.abs(c.logPmf))) bad.push(`logPmf(${c.k}; ${c.n}, ${c.p}) = ${logPmf}, scipy ${c.logPmf}`);
    }
    expect(bad).toEqual([]);
  });

  it('log Γ at integers is log of the factorial', () => {
    // Γ(n + 1) = n!
    expect(logGamma(1)).toBeCloseTo(0, 14);
    expect(logGamma(11)).toBeCloseTo(Math.log(3628800), 12);
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 14);
  });
});
