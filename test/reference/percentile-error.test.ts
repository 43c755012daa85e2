import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { orderStatisticStdErr, exactBootstrapStdErr } from '../../src/statistics/batch-means.js';
import { quantileSorted } from '../../src/statistics/quantiles.js';
import { normalQuantile } from '../../src/statistics/normal-quantile.js';

// Fixture: scripts/reference/percentile_error_reference.py — the exact bootstrap sd of a sample
// order statistic (Maritz & Jarrett 1978, JASA 73(361)) from scipy.stats.binom over every
// position, checked there against a plain numpy bootstrap of the type-7 percentile (200 000
// resamples) wherever a resample can move it: smooth samples, percentiles on a point mass, and a
// median at the edge of a cluster.
interface Fixture {
  cases: { name: string; q: number; pointMass: boolean; x: number[]; sd: number; bootstrapSd: number | null }[];
}
const fixture = JSON.parse(readFileSync(new URL('./fixtures/percentile-error.json', import.meta.url), 'utf8')) as Fixture;

describe('the error of a percentile agrees with the exact bootstrap (scipy.stats.binom)', () => {
  it.each(fixture.cases.map((c) => [c.name, c] as const))('%s', (_name, c) => {
    const x = Float64Array.from(c.x);
    const n = x.length;
    const s = Math.sqrt((c.q * (1 - c.q)) / n);
    // The point-mass cases put the percentile on a mass covering its ≈ 95 % rank interval.
    if (c.pointMass) expect(quantileSorted(x, n, Math.min(1, c.q + 1.959963984540054 * s)) - quantileSorted(x, n, Math.max(0, c.q - 1.959963984540054 * s))).toBe(0);
    const se = orderStatisticStdErr(x, n, c.q);
    expect(se).toBe(exactBootstrapStdErr(x, n, c.q));
    // The same sum over every position whose weight is not 0 in double precision.
    expect(Math.abs(se - c.sd)).toBeLessThanOrEqual(1e-6 * c.sd);
  });

  it('on a smooth sample of 2000 normal draws, near the asymptotic sd √(q(1−q)/n)/φ(Φ⁻¹(q))', () => {
    // Serfling (1980), §2.3.3: the sample q-quantile is asymptotically normal with that sd. The
    // bootstrap variance of one sample's quantile has a relative error of order n^(−1/4) (Hall &
    // Martin 1988; from memory), about 15 % at n = 2000, so the check allows 30 %.
    for (const c of fixture.cases.filter((f) => f.name.startsWith('normal sample of 2000'))) {
      const x = Float64Array.from(c.x);
      const z = normalQuantile(c.q);
      const asymptotic = Math.sqrt((c.q * (1 - c.q)) / x.length) / (Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI));
      expect(Math.abs(orderStatisticStdErr(x, x.length, c.q) / asymptotic - 1), c.name).toBeLessThan(0.3);
    }
  });

  it('exactly 0 when the mass covers ±7 sds of rank; positive as soon as an edge lies within reach', () => {
    // 200 draws, the median on a mass at ranks 0.10–0.90 (11 sds either side): no rerun leaves it.
    const wide = Float64Array.from({ length: 200 }, (_, b) => (b < 20 ? b / 1000 : b >= 180 ? 1 + b / 1000 : 0.5));
    expect(orderStatisticStdErr(wide, 200, 0.5)).toBe(0);
    // The same with the upper edge at rank 0.62 (3.4 sds): a small, positive error.
    const near = Float64Array.from({ length: 200 }, (_, b) => (b < 20 ? b / 1000 : b >= 124 ? 1 + b / 1000 : 0.5));
    const se = orderStatisticStdErr(near, 200, 0.5);
    expect(se).toBeGreaterThan(0);
    expect(se).toBeLessThan(0.05);
  });
});
