import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  longestTie,
  gatherFiniteSorted,
  midRankPercentileSorted,
  PERCENTILE_DEFINITION,
  quantileSorted,
  quantilesOfStrided,
} from '../../src/statistics/quantiles.js';

// Definition: Hyndman & Fan (1996), The American Statistician 50(4), type 7 (numpy 'linear');
// numpy agreement itself is checked in test/reference/statistics.test.ts.
describe('quantileSorted', () => {
  it('hits order statistics exactly at p = k/(n−1) and interpolates linearly between them', () => {
    const x = Float64Array.of(1, 2, 4, 8, 16); // n = 5: h = 4p
    expect(quantileSorted(x, 5, 0)).toBe(1);
    expect(quantileSorted(x, 5, 0.25)).toBe(2);
    expect(quantileSorted(x, 5, 1)).toBe(16);
    expect(quantileSorted(x, 5, 0.375)).toBe(3); // h = 1.5 → 2 + 0.5·(4 − 2)
    expect(quantileSorted(x, 5, 0.05)).toBeCloseTo(1.2, 15); // h = 0.2 → 1 + 0.2·1
  });

  it('edge cases: n = 1, n = 2, constant samples, empty sample and bad probabilities', () => {
    expect(quantileSorted(Float64Array.of(7), 1, 0.95)).toBe(7);
    expect(quantileSorted(Float64Array.of(-1, 3), 2, 0.5)).toBe(1);
    expect(quantileSorted(new Float64Array(9).fill(0.25), 9, 0.05)).toBe(0.25);
    expect(quantileSorted(new Float64Array(0), 0, 0.5)).toBeNaN();
    expect(() => quantileSorted(Float64Array.of(1, 2), 2, 1.5)).toThrow(RangeError);
  });

  it('is monotone in p and stays within [min, max] (property)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: 1, maxLength: 40 }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (values, p, q) => {
          const sorted = Float64Array.from(values).sort();
          const n = sorted.length;
          const [lo, hi] = p <= q ? [p, q] : [q, p];
          const a = quantileSorted(sorted, n, lo);
          const b = quantileSorted(sorted, n, hi);
          return a <= b && a >= sorted[0] && b <= sorted[n - 1];
        },
      ),
    );
  });

  it('documents the definition for the report meta', () => {
    expect(PERCENTILE_DEFINITION).toContain('Hyndman & Fan 1996');
    expect(PERCENTILE_DEFINITION).toContain("method='linear'");
  });
});

describe('strided gathering', () => {
  it('skips NaN (failed draws) and reads a column of a row-major block', () => {
    // 4 draws × 2 assets; draw 2 failed.
    const block = Float64Array.of(0.1, 0.9, 0.3, 0.7, Number.NaN, Number.NaN, 0.2, 0.8);
    const scratch = new Float64Array(4);
    expect(gatherFiniteSorted(block, 1, 2, 4, scratch)).toBe(3);
    expect(Array.from(scratch.subarray(0, 3))).toEqual([0.7, 0.8, 0.9]);
    const out = new Float64Array(2);
    expect(quantilesOfStrided(block, 0, 2, 4, [0, 0.5], scratch, out)).toBe(3);
    expect(Array.from(out)).toEqual([0.1, 0.2]);
    expect(() => gatherFiniteSorted(block, 0, 2, 4, new Float64Array(3))).toThrow(RangeError);
  });
});

describe('midRankPercentileSorted', () => {
  it('counts ties as half: 100·(#below + ½#equal)/n', () => {
    const x = Float64Array.of(1, 2, 2, 3);
    expect(midRankPercentileSorted(x, 4, 2)).toBe(50); // (1 + 1)/4
    expect(midRankPercentileSorted(x, 4, 0)).toBe(0);
    expect(midRankPercentileSorted(x, 4, 9)).toBe(100);
    expect(midRankPercentileSorted(x, 4, 1)).toBe(12.5);
    expect(midRankPercentileSorted(new Float64Array(5).fill(0.2), 5, 0.2)).toBe(50);
    expect(midRankPercentileSorted(x, 0, 1)).toBeNaN();
  });
});

describe('longestTie', () => {
  it('counts the most common value of a sorted sample, exactly or within a rounding tolerance', () => {
    const x = [0.1, 0.2, 0.2, 0.2, 0.3, 0.3];
    expect(longestTie(x, 6, 0)).toBe(3);
    expect(longestTie(x, 3, 0)).toBe(2);
    expect(longestTie([], 0, 0)).toBe(0);
    // Values differing in their last bits chain into one run with a tolerance, not without.
    const rounded = [0.5, 0.5 + 2e-16, 0.5 + 4e-16, 0.7];
    expect(longestTie(rounded, 4, 0)).toBe(1);
    expect(longestTie(rounded, 4, 1e-13)).toBe(3);
  });
});
