import { describe, expect, it } from 'vitest';
import {
  batchCount,
  batchOfDraw,
  batchStart,
  createQuantileErrorWorkspace,
  MONTE_CARLO_ERROR_DESCRIPTION,
  orderStatisticStdErr,
  quantileStdErrs,
  quantileWidthStdErr,
  stdErrOfBatchStatistics,
  stridedMoments,
} from '../../src/stress/batch-means.js';

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
  it('order-statistic fallback: the interval of ranks nq ∓ 1.96√(nq(1−q)) over 2·1.96', () => {
    // n = 20, q = 0.5: ranks ⌊10 − 4.38⌋ = 5 and ⌈14.38⌉ = 15 of x = 1..20 → (15 − 5)/(2·1.96).
    const x = Float64Array.from({ length: 20 }, (_, k) => k + 1);
    expect(orderStatisticStdErr(x, 20, 0.5)).toBeCloseTo(10 / (2 * 1.959963984540054), 14);
    expect(orderStatisticStdErr(x, 1, 0.5)).toBeNaN();
  });

  it('small B uses order statistics, B ≥ 100 batch means; constant samples give 0; B = 1 gives NaN', () => {
    const out = new Float64Array(2);
    expect(quantileStdErrs(new Float64Array(50).fill(0.3), 0, 1, 50, [0.05, 0.95], out, createQuantileErrorWorkspace(50))).toBe('order-statistic');
    expect(Array.from(out)).toEqual([0, 0]);
    expect(quantileStdErrs(new Float64Array(200).fill(0.3), 0, 1, 200, [0.05, 0.95], out, createQuantileErrorWorkspace(200))).toBe('batch-means');
    expect(Array.from(out)).toEqual([0, 0]);
    quantileStdErrs(Float64Array.of(2), 0, 1, 1, [0.5, 0.5], out, createQuantileErrorWorkspace(1));
    expect(out[0]).toBeNaN();
    expect(quantileWidthStdErr(new Float64Array(200).fill(1), 0, 1, 200, 0.05, 0.95, createQuantileErrorWorkspace(200))).toBe(0);
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
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('Schmeiser 1982');
    expect(MONTE_CARLO_ERROR_DESCRIPTION).toContain('min(30, floor(B/10))');
  });
});
