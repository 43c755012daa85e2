import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { binomialCdf } from '../../src/statistics/binomial-tail.js';
import { BAND_EDGE_TOLERANCE, holmRejections, outsideBandCounts, outsideBandShareBound, outsideBandShareOver } from '../../src/statistics/stability.js';
import { WeightAccumulator } from '../../src/statistics/weight-accumulator.js';

/** B × N rows from a per-asset generator (draw b, asset i). */
function rowsOf(draws: number, n: number, weight: (b: number, i: number) => number): Float64Array {
  const rows = new Float64Array(draws * n);
  for (let b = 0; b < draws; b++) for (let i = 0; i < n; i++) rows[b * n + i] = weight(b, i);
  return rows;
}

const bounds = (rows: Float64Array, draws: number, n: number, proposal: number[], alpha = 0.05) => {
  const counts = outsideBandCounts(rows, draws, n, proposal, BAND_EDGE_TOLERANCE);
  return { lower: outsideBandShareBound(counts, 'lower', alpha), upper: outsideBandShareBound(counts, 'upper', alpha) };
};

describe('outside-band share bounds (binomial quantile tests, Holm over the assets)', () => {
  it('Holm rejects step by step at α/(m − j) and stops at the first acceptance', () => {
    // Holm (1979): sorted p-values 0.001 ≤ 0.05/3, 0.02 ≤ 0.05/2, 0.04 ≤ 0.05/1 — all three
    // rejected, where Bonferroni (0.05/3 for each) rejects one.
    expect(holmRejections([0.04, 0.001, 0.02], 0.05)).toBe(3);
    expect(holmRejections([0.001, 0.03, 0.04], 0.05)).toBe(1);
    expect(holmRejections([0.2, 0.3], 0.05)).toBe(0);
    expect(holmRejections([], 0.05)).toBe(0);
  });

  it('point masses classify exactly: a weight pinned where the proposal is is inside, pinned elsewhere is outside', () => {
    const B = 200;
    // Asset 0 pinned at 0 with the proposal at 0 (a bound); asset 1 pinned at 0 with the proposal at 0.3;
    // asset 2 pinned at 0.7 with the proposal at 0.7 + 1e-12 (within the band-edge tolerance).
    const rows = rowsOf(B, 3, (_, i) => (i === 2 ? 0.7 : 0));
    const proposal = [0, 0.3, 0.7 + 1e-12];
    const { lower, upper } = bounds(rows, B, 3, proposal);
    expect(outsideBandShareOver(rows, 3, new Float64Array(proposal), BAND_EDGE_TOLERANCE, 0, B, new Float64Array(B))).toBeCloseTo(1 / 3, 15);
    // The p-values are 0.05^200 (inside) and 0.95^200 ≈ 3.5e-5 (outside): both far below α/3.
    expect(lower).toEqual({ bound: 1 / 3, outside: 1, assets: 3 });
    expect(upper).toEqual({ bound: 1 / 3, outside: 1, assets: 3 });
  });

  it('an asset right at a band edge is neither confidently outside nor confidently inside', () => {
    // Asset 0: the draws are the grid (k + ½)/B of the uniform distribution, the proposal at its
    // 5th percentile 0.05: 10 of 200 draws lie at or below it, the expected count under "on the edge".
    // Asset 1: far inside (the median).
    const B = 200;
    const rows = rowsOf(B, 2, (b) => (b + 0.5) / B);
    const { lower, upper } = bounds(rows, B, 2, [0.05, 0.5]);
    expect(lower?.outside).toBe(0);
    expect(upper?.outside).toBe(1);
    expect(upper?.bound).toBe(0.5);
    // Just outside by a margin the draws can show: 0.005 has 1 draw at or below it;
    // P(Bin(200, 0.05) ≤ 1) ≈ 4.3e-4 < 0.05/2, so it is confidently outside.
    expect(binomialCdf(1, B, 0.05)).toBeLessThan(0.025);
    const clear = bounds(rows, B, 2, [0.005, 0.5]);
    expect(clear.lower?.outside).toBe(1);
    expect(clear.upper?.outside).toBe(1);
  });

  it('is not estimable with fewer than 2 successful draws (all draws failed, or one)', () => {
    const B = 50;
    const failed = rowsOf(B, 2, () => Number.NaN);
    expect(bounds(failed, B, 2, [0.5, 0.5]).lower).toBeUndefined();
    const one = rowsOf(B, 2, (b) => (b === 3 ? 0.5 : Number.NaN));
    expect(bounds(one, B, 2, [0.5, 0.5]).upper).toBeUndefined();
    // Failed rows are left out of the counts, not counted as draws.
    const some = rowsOf(B, 2, (b) => (b % 5 === 0 ? Number.NaN : 0.5));
    expect(outsideBandCounts(some, B, 2, [0.5, 0.5], BAND_EDGE_TOLERANCE).successful[0]).toBe(40);
  });

  it('gives the same counts and bounds from one range of draws as from four merged ranges', () => {
    const B = 400;
    const n = 5;
    const proposal = [0.05, 0.1, 0.2, 0.3, 0.35];
    const weight = (b: number, out: Float64Array) => {
      const r = seedrandom(`merge-${b}`);
      let sum = 0;
      for (let i = 0; i < n; i++) sum += out[i] = r() ** 2;
      for (let i = 0; i < n; i++) out[i] /= sum;
      if (b % 37 === 0) out[0] = Number.NaN; // a failed draw
    };
    const row = new Float64Array(n);
    const whole = new WeightAccumulator(B, n);
    for (let b = 0; b < B; b++) {
      weight(b, row);
      whole.record(b, row);
    }
    const merged = new WeightAccumulator(B, n);
    for (const [from, to] of [
      [0, 90],
      [90, 200],
      [200, 333],
      [333, 400],
    ]) {
      const part = new WeightAccumulator(B, n);
      for (let b = from; b < to; b++) {
        weight(b, row);
        part.record(b, row);
      }
      merged.merge(part);
    }
    const a = outsideBandCounts(whole.rows(), B, n, proposal, BAND_EDGE_TOLERANCE);
    const c = outsideBandCounts(merged.rows(), B, n, proposal, BAND_EDGE_TOLERANCE);
    expect(c).toEqual(a);
    for (const side of ['lower', 'upper'] as const) expect(outsideBandShareBound(c, side, 0.05)).toEqual(outsideBandShareBound(a, side, 0.05));
  });

  it('keeps its guarantee over seeds: at most about α of samples put the bound on the wrong side of the limit share', () => {
    // Uniform(0, 1) weights, so the limit band is [0.05, 0.95] exactly. Hardest cases for each side:
    // the lower bound with 8 assets sitting exactly on an edge (inside: limit share 0), the upper
    // bound with 8 assets just outside (0.0499 and 0.9501: limit share 1). 400 samples of 200 draws;
    // the guarantee is ≤ 5 %, and the bound of the rate's sd from 400 samples is about 1.1 %.
    const B = 200;
    const n = 8;
    const samples = 400;
    const onEdge = [0.05, 0.95, 0.05, 0.95, 0.05, 0.95, 0.05, 0.95];
    const justOutside = [0.0499, 0.9501, 0.0499, 0.9501, 0.0499, 0.9501, 0.0499, 0.9501];
    let lowerWrong = 0;
    let upperWrong = 0;
    for (let s = 0; s < samples; s++) {
      const r = seedrandom(`guarantee-${s}`);
      const rows = rowsOf(B, n, () => r());
      const lower = outsideBandShareBound(outsideBandCounts(rows, B, n, onEdge, BAND_EDGE_TOLERANCE), 'lower', 0.05);
      const upper = outsideBandShareBound(outsideBandCounts(rows, B, n, justOutside, BAND_EDGE_TOLERANCE), 'upper', 0.05);
      if ((lower?.bound ?? 0) > 0) lowerWrong++;
      if ((upper?.bound ?? 1) < 1) upperWrong++;
    }
    expect(lowerWrong / samples).toBeLessThanOrEqual(0.07);
    expect(upperWrong / samples).toBeLessThanOrEqual(0.07);
    // Not blind: assets outside (0.01, limit F = 0.01) are found in most samples. Each count at or
    // below 0.01 is Binomial(200, 0.01), mean 2; the test at α/8 rejects at ≤ 2 draws (P ≈ 0.68
    // alone), and Holm's later steps test at up to α once some assets are found.
    let found = 0;
    for (let s = 0; s < 50; s++) {
      const r = seedrandom(`power-${s}`);
      const rows = rowsOf(B, n, () => r());
      found += outsideBandShareBound(outsideBandCounts(rows, B, n, new Array<number>(n).fill(0.01), BAND_EDGE_TOLERANCE), 'lower', 0.05)?.outside ?? 0;
    }
    expect(found / (50 * n)).toBeGreaterThan(0.75);
  });
});
