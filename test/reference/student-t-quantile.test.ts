import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { studentTCentralProbability, studentTQuantile } from '../../src/statistics/student-t-quantile.js';

// Fixture: scripts/reference/student_t_quantile_reference.py — scipy.stats.t.ppf and t.cdf for
// integer degrees of freedom 1..40, 49, 59, 99.
interface Fixture {
  cases: { nu: number; p: number; quantile: number; cdfAt2: number }[];
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/student-t-quantile.json', import.meta.url), 'utf8')) as Fixture;

describe('Student-t quantiles agree with scipy.stats.t', () => {
  it('quantiles and the distribution function over the fixture', () => {
    expect(fixture.cases.length).toBeGreaterThan(300);
    const bad: string[] = [];
    for (const c of fixture.cases) {
      const q = studentTQuantile(c.p, c.nu);
      if (Math.abs(q - c.quantile) > 1e-9 * c.quantile) bad.push(`t(${c.p}; ${c.nu}) = ${q}, scipy ${c.quantile}`);
      const cdf = (1 + studentTCentralProbability(2, c.nu)) / 2;
      if (Math.abs(cdf - c.cdfAt2) > 1e-12) bad.push(`P(T ≤ 2; ${c.nu}) = ${cdf}, scipy ${c.cdfAt2}`);
    }
    expect(bad).toEqual([]);
  });

  it('known values: Cauchy at ν = 1, and t(0.95; 19) = 1.729 (from memory, the printed tables)', () => {
    expect(studentTQuantile(0.75, 1)).toBeCloseTo(1, 12);
    expect(studentTQuantile(0.95, 19)).toBeCloseTo(1.729, 3);
    expect(studentTQuantile(0.5, 7)).toBe(0);
  });
});
