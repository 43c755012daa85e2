import { describe, expect, it } from 'vitest';
import {
  batchCount,
  batchOfDraw,
  batchStart,
  createQuantileErrorWorkspace,
  jackknifeStdErr,
  MONTE_CARLO_ERROR_DESCRIPTION,
  orderStatisticStdErr,
  quantileCorrelation,
  sdStdErrOfStrided,
  quantileStdErrs,
  quantileWidthStdErr,
  stdErrOfBatchStatistics,
  stridedMoments,
} from '../../src/statistics/batch-means.js';

// Batch means: Schmeiser (1982), Operations Research 30(3); m = min(30, ⌊B/10⌋) is the project's
// documented choice (common practice: 20–50 batches when B allows). Numbers vs numpy are in
// test/reference/statistics.test.ts.
describe('batch layout', () => {
  it('m = min(30, ⌊B/10⌋)', () => {
    expect([1, 9, 10, 99, 100, 250, 299, 300, 5000].map(batchCount)).toEqual([0, 0, 1, 9, 10, 25, 29, 30, 30]);
  });

  it('batches are contiguous, cover 0..B−1 and batchOfDraw inverts batchStart', () => {
    for (const B of [10, 37, 100, 101, 257, 5000]) {
      const m = Math.max(1, batchCount(B));
      expect(batchStart(B, m, 0)).toBe(0);
      expect(batchStart(B, m, m)).toBe(B);
      for (let b = 0; b < B; b++) {
        const k = batchOfDraw(B, m, b);
        expect(batchStart(B, m, k) <= b && b < batchStart(B, m, k + 1)).toBe(true);
      }
    }
  });
});

describe('moments', () => {
  it('sample sd with divisor n − 1 and SE = sd/√n; failed (NaN) draws excluded', () => {
    // x = 1..5: mean 3, sample variance 2.5 (textbook).
    const m = stridedMoments(Float64Array.of(1, Number.NaN, 2, 3, 4, 5), 0, 1, 6);
    expect(m.count).toBe(5);
    expect(m.mean).toBe(3);
    expect(m.sd).toBeCloseTo(Math.sqrt(2.5), 15);
    expect(m.stdErr).toBeCloseTo(Math.sqrt(2.5 / 5), 15);
    const single = stridedMoments(Float64Array.of(4), 0, 1, 1);
    expect(single.mean).toBe(4);
    expect(single.sd).toBeNaN();
    expect(stridedMoments(Float64Array.of(Number.NaN), 0, 1, 1).count).toBe(0);
  });

  it('batch-statistic SE skips empty batches and needs two', () => {
    expect(stdErrOfBatchStatistics(Float64Array.of(1, Number.NaN, 3), 3)).toBeCloseTo(Math.sqrt(2) / Math.sqrt(2), 15);
    expect(stdErrOfBatchStatistics(Float64Array.of(1), 1)).toBeNaN();
  });
});

describe('quantile errors', () => {
  it('percentile SE: the exact bootstrap sd, which on an evenly spaced sample is the slope times √(q(1−q)/n)', () => {
    // x = 1..401: type-7 Q(p) = 1 + 400p, so the asymptotic sd of the sample q-quantile is
    // 400·√(q(1−q)/n) (Serfling 1980, §2.3.3). The exact bootstrap (Maritz & Jarrett 1978) adds the
    // binomial's skew near the tails: within 0.1 % at the median and 3 % at q = 0.05 for n = 401.
    const x = Float64Array.from({ length: 401 }, (_, k) => k + 1);
    expect(orderStatisticStdErr(x, 401, 0.5) / (400 * Math.sqrt(0.25 / 401))).toBeCloseTo(1, 3);
    expect(Math.abs(orderStatisticStdErr(x, 401, 0.05) / (400 * Math.sqrt((0.05 * 0.95) / 401)) - 1)).toBeLessThan(0.03);
    expect(orderStatisticStdErr(x, 1, 0.5)).toBeNaN();
    // The same weights serve every column of a method (cached by n and rank): a second column of
    // the same length gets its own values' error, not the first one's.
    expect(orderStatisticStdErr(Float64Array.from(x, (v) => 2 * v), 401, 0.5)).toBeCloseTo(2 * orderStatisticStdErr(x, 401, 0.5), 12);
  });

  it('exactly 0 on a point mass (tied order statistics), NaN below 2 draws', () => {
    const out = new Float64Array(3);
    expect(quantileStdErrs(new Float64Array(50).fill(0.3), 0, 1, 50, [0.05, 0.5, 0.95], out, createQuantileErrorWorkspace(50))).toBe('order-statistic');
    expect(Array.from(out)).toEqual([0, 0, 0]);
    // 90 % of the draws pinned at 0: the p05 and p50 are tied there (error 0), the p95 is not.
    const pinned = Float64Array.from({ length: 400 }, (_, b) => (b % 10 === 0 ? 0.01 + b * 1e-4 : 0));
    quantileStdErrs(pinned, 0, 1, 400, [0.05, 0.5, 0.95], out, createQuantileErrorWorkspace(400));
    expect(out[0]).toBe(0);
    expect(out[1]).toBe(0);
    expect(out[2]).toBeGreaterThan(0);
    quantileStdErrs(Float64Array.of(2), 0, 1, 1, [0.5, 0.5, 0.5], out, createQuantileErrorWorkspace(1));
    expect(out[0]).toBeNaN();
    expect(quantileWidthStdErr(new Float64Array(200).fill(1), 0, 1, 200, 0.05, 0.95, createQuantileErrorWorkspace(200))).toBe(0);
  });

  it('band width: the two errors with the asymptotic correlation l(1−h)/√(l(1−l)h(1−h))', () => {
    // Serfling (1980) §2.3.3: for the 5th and 95th percentiles the correlation is 0.0025/0.0475.
    expect(quantileCorrelation(0.05, 0.95)).toBeCloseTo(0.0025 / 0.0475, 15);
    const x = Float64Array.from({ length: 401 }, (_, k) => k / 400);
    const ws = createQuantileErrorWorkspace(401);
    const lo = orderStatisticStdErr(x, 401, 0.05);
    const hi = orderStatisticStdErr(x, 401, 0.95);
    const rho = 0.0025 / 0.0475;
    expect(quantileWidthStdErr(x, 0, 1, 401, 0.05, 0.95, ws)).toBeCloseTo(Math.sqrt(lo * lo + hi * hi - 2 * rho * lo * hi), 15);
  });

  it('delta-method SE of a standard deviation and the grouped jackknife', () => {
    // Normal data: (m4 − s⁴)/(4s²n) → s²/(2n) (m4 = 3σ⁴; Kendall & Stuart, from memory). Symmetric ±1 data has
    // m4 = s⁴ exactly, so the sd of such a sample is known without error: SE 0.
    const pm = Float64Array.from({ length: 100 }, (_, k) => (k % 2 === 0 ? 1 : -1));
    expect(sdStdErrOfStrided(pm, 0, 1, 100)).toBeLessThan(1e-9);
    expect(sdStdErrOfStrided(new Float64Array(10).fill(3), 0, 1, 10)).toBe(0);
    expect(sdStdErrOfStrided(Float64Array.of(3), 0, 1, 1)).toBeNaN();
    // Jackknife of the mean equals sd/√n (Efron & Tibshirani 1993, §11.2): leave-one-out means of 1..5.
    const values = [1, 2, 3, 4, 5];
    const loo = Float64Array.from(values, (_, k) => (15 - values[k]) / 4);
    expect(jackknifeStdErr(loo, 5)).toBeCloseTo(Math.sqrt(2.5 / 5), 14);
  });

  it('does not depend on anything but the values in their draw slots', () => {
    const B = 400;
    const x = Float64Array.from({ length: B }, (_, b) => Math.sin(b * 12.9898) * 43758.5453 % 1);
    const a = new Float64Array(3);
    const b = new Float64Array(3);
    quantileStdErrs(x, 0, 1, B, [0.05, 0.5, 0.95], a, createQuantileErrorWorkspace(B));
    // Same values embedded as column 1 of a B × 3 block.
    const block = new Float64Array(B * 3).fill(-7);
    x.forEach((v, k) => (block[k * 3 + 1] = v));
    quantileStdErrs(block, 1, 3, B, [0.05, 0.5, 0.95], b, createQuantileErrorWorkspace(B));
    expect(Array.from(b)).toEqual(Array.from(a));
    expect(a.every((v) => v > 0)).toBe(true);
  });

  it('describes itself for the report meta', () => {
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('exact bootstrap standard deviation of the sample percentile');
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('jackknife');
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('bootstrap');
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('reported as null');
    expect(MONTE_CARLO_ERROR_DESCRIPTION).not.toContain('reported as 0');
  });
});
