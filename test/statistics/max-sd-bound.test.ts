import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { sdStdErrOfStrided, stridedMoments } from '../../src/statistics/batch-means.js';
import { maxSdBound } from '../../src/statistics/max-sd-bound.js';

// Standard normal quantiles (e.g. Abramowitz & Stegun 1964, table 26.5; from memory):
// Φ⁻¹(0.95) = 1.6448536269514722, Φ⁻¹(0.975) = 1.959963984540054.
const Z95 = 1.6448536269514722;
const Z975 = 1.959963984540054;

describe('maxSdBound (largest weight sd, simultaneous over the assets)', () => {
  it('lower bound: Bonferroni over the assets with a positive sd; upper bound: no adjustment', () => {
    const lower = maxSdBound([0.1, 0.12], [0.01, 0.01], 'lower', 0.05);
    expect(lower?.bound).toBeCloseTo(0.12 - Z975 * 0.01, 12); // α/m = 0.025
    expect(lower?.asset).toBe(1);
    expect(lower?.tested).toBe(2);
    expect(maxSdBound([0.1, 0.12], [0.01, 0.01], 'upper', 0.05)?.bound).toBeCloseTo(0.12 + Z95 * 0.01, 12);
    // An asset pinned at one weight (sd 0, error 0) takes no share of α.
    expect(maxSdBound([0, 0.1], [0, 0.01], 'lower', 0.05)?.bound).toBeCloseTo(0.1 - Z95 * 0.01, 12);
    // Never below 0, and exactly 0 when nothing moves.
    expect(maxSdBound([0.001], [0.01], 'lower', 0.05)?.bound).toBe(0);
    expect(maxSdBound([0, 0], [0, 0], 'lower', 0.05)).toEqual({ bound: 0, asset: -1, tested: 0 });
    expect(maxSdBound([0, 0], [0, 0], 'upper', 0.05)?.bound).toBe(0);
  });

  it('is not estimable when every draw failed or an asset has a sd without an error', () => {
    expect(maxSdBound([Number.NaN, Number.NaN], [Number.NaN, Number.NaN], 'lower', 0.05)).toBeUndefined();
    expect(maxSdBound([0.1, 0.2], [0.01, Number.NaN], 'upper', 0.05)).toBeUndefined();
  });

  it('a max rule at the true largest sd fails at most about α of the time, where value − z·se fails more often', () => {
    // 8 assets with the same true sd 0.1 (normal weights): the sample maximum is biased upward, so
    // the plain test fails a rule that holds; the simultaneous bound keeps its guarantee.
    const n = 8;
    const B = 200;
    const samples = 300;
    const rows = new Float64Array(B * n);
    let simultaneous = 0;
    let plain = 0;
    for (let s = 0; s < samples; s++) {
      const r = seedrandom(`max-sd-${s}`);
      for (let k = 0; k < rows.length; k++) rows[k] = 0.1 * Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r());
      const sd = new Float64Array(n);
      const se = new Float64Array(n);
      let best = 0;
      for (let i = 0; i < n; i++) {
        sd[i] = stridedMoments(rows, i, n, B).sd;
        se[i] = sdStdErrOfStrided(rows, i, n, B);
        if (sd[i] > sd[best]) best = i;
      }
      if ((maxSdBound(sd, se, 'lower', 0.05)?.bound ?? 0) > 0.1) simultaneous++;
      if (sd[best] - Z95 * se[best] > 0.1) plain++;
    }
    expect(simultaneous / samples).toBeLessThanOrEqual(0.06);
    expect(plain / samples).toBeGreaterThan(simultaneous / samples);
  });
});
