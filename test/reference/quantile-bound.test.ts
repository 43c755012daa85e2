import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { lowerOrderIndex, quantileBoundSorted, upperOrderIndex } from '../../src/statistics/quantile-bound.js';

// Fixture: scripts/reference/quantile_bound_reference.py — the order-statistic indices of the
// distribution-free one-sided quantile bounds from scipy.stats.binom (ppf and cdf).
interface Fixture {
  cases: { n: number; q: number; alpha: number; upper: number | null; lower: number | null }[];
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/quantile-bound.json', import.meta.url), 'utf8')) as Fixture;

describe('order-statistic bounds of a quantile agree with scipy.stats.binom', () => {
  it('upper index k and lower index j over the fixture', () => {
    expect(fixture.cases.length).toBeGreaterThan(200);
    const bad: string[] = [];
    for (const c of fixture.cases) {
      const k = upperOrderIndex(c.n, c.q, c.alpha) ?? null;
      const j = lowerOrderIndex(c.n, c.q, c.alpha) ?? null;
      if (k !== c.upper) bad.push(`upper(${c.n}, ${c.q}, ${c.alpha}) = ${k}, scipy ${c.upper}`);
      if (j !== c.lower) bad.push(`lower(${c.n}, ${c.q}, ${c.alpha}) = ${j}, scipy ${c.lower}`);
    }
    expect(bad).toEqual([]);
  });

  it('reads the order statistic: the median of 200 draws at 95 % lies between the 88th and 113th', () => {
    const sorted = Float64Array.from({ length: 200 }, (_, i) => i + 1);
    // scipy.stats.binom.ppf(0.95, 200, 0.5) = 112, so k = 113; P(Bin ≤ 87) ≤ 0.05 < P(Bin ≤ 88), so j = 88.
    expect(quantileBoundSorted(sorted, 200, 0.5, 'upper', 0.05)).toBe(113);
    expect(quantileBoundSorted(sorted, 200, 0.5, 'lower', 0.05)).toBe(88);
    // Too few draws for a 99 % bound of the 5th percentile from below.
    expect(quantileBoundSorted(sorted, 20, 0.05, 'lower', 0.01)).toBeUndefined();
  });
});
