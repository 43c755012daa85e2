import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { ChannelVarianceAccumulator } from '../../src/statistics/channel-variance.js';
import { shuffledIndices } from '../helpers/draw-order.js';

// meanDrivenShare_i = Var_mean(w_i)/(Var_mean(w_i) + Var_cov(w_i)) as specified in the design;
// numbers against numpy.var(ddof=1) are in test/reference/statistics.test.ts.
const N = 4;

function rowOf(b: number, channel: string, scale: number, out: Float64Array): Float64Array {
  const random = seedrandom(`${channel}-${b}`);
  for (let i = 0; i < N; i++) out[i] = 0.25 + scale * (random() - 0.5);
  return out;
}

describe('ChannelVarianceAccumulator', () => {
  it('is bit-identical for shuffled order, split ranges, merge order and a JSON round trip', () => {
    const B = 437;
    const row = new Float64Array(N);
    const fill = (acc: ChannelVarianceAccumulator, draws: Iterable<number>): void => {
      for (const b of draws) {
        if (b % 50 === 3) acc.recordFailure(b, 'mean-only');
        else acc.record(b, 'mean-only', rowOf(b, 'mean', 0.1, row));
        acc.record(b, 'covariance-only', rowOf(b, 'cov', 0.05, row));
      }
    };
    const inOrder = new ChannelVarianceAccumulator(B, N);
    fill(inOrder, Array.from({ length: B }, (_, b) => b));
    const reordered = new ChannelVarianceAccumulator(B, N);
    fill(reordered, shuffledIndices(B, 'channels'));
    const parts = [0, 100, 250, 437].slice(0, -1).map((from, k, starts) => {
      const acc = new ChannelVarianceAccumulator(B, N);
      const to = k + 1 < starts.length ? starts[k + 1] : B;
      fill(acc, shuffledIndices(to - from, `part-${k}`).map((j) => from + j));
      return acc;
    });
    parts[2].merge(parts[0]);
    parts[2].merge(parts[1]);
    const expected = inOrder.summarize();
    expect(reordered.summarize()).toEqual(expected);
    expect(parts[2].summarize()).toEqual(expected);
    const roundTrip = ChannelVarianceAccumulator.fromState(JSON.parse(JSON.stringify(parts[2].toState())));
    expect(roundTrip.summarize()).toEqual(expected);
    expect(expected.meanChannelFailures).toBe(9);
    expect(expected.meanChannelDraws).toBe(B - 9);
    // Uniform noise of width 0.1 vs 0.05: variance ratio 4, so the share is near 0.8.
    expect(expected.overall).toBeGreaterThan(0.7);
    expect(expected.overall).toBeLessThan(0.9);
    expect(expected.overallErrorMethod).toBe('jackknife');
    expect(expected.overallStdErr).toBeGreaterThan(0);
    expect(expected.overallStdErr).toBeLessThan(0.05);
  });

  it('share is exactly 1 when the covariance channel has zero variance and 0 when the mean channel does', () => {
    const B = 200;
    const row = new Float64Array(N);
    const constant = Float64Array.of(0.1, 0.2, 0.3, 0.4);
    const meanOnly = new ChannelVarianceAccumulator(B, N);
    const covarianceOnly = new ChannelVarianceAccumulator(B, N);
    for (let b = 0; b < B; b++) {
      meanOnly.record(b, 'mean-only', rowOf(b, 'mean', 0.1, row));
      meanOnly.record(b, 'covariance-only', constant);
      covarianceOnly.record(b, 'mean-only', constant);
      covarianceOnly.record(b, 'covariance-only', rowOf(b, 'cov', 0.1, row));
    }
    const one = meanOnly.summarize();
    expect(one.overall).toBe(1);
    expect(Array.from(one.perAsset)).toEqual([1, 1, 1, 1]);
    expect(Array.from(one.covarianceChannelVariance)).toEqual([0, 0, 0, 0]);
    expect(one.overallStdErr).toBe(0);
    const zero = covarianceOnly.summarize();
    expect(zero.overall).toBe(0);
    expect(Array.from(zero.perAsset)).toEqual([0, 0, 0, 0]);
    expect(zero.overallStdErr).toBe(0);
  });

  it('both channels constant (e.g. equal weight): share 0; tiny B: conservative error 0.5', () => {
    const flat = new ChannelVarianceAccumulator(30, 2);
    for (let b = 0; b < 30; b++) {
      flat.record(b, 'mean-only', [0.5, 0.5]);
      flat.record(b, 'covariance-only', [0.5, 0.5]);
    }
    expect(flat.summarize().overall).toBe(0);
    const tiny = new ChannelVarianceAccumulator(5, 1);
    for (let b = 0; b < 5; b++) {
      tiny.record(b, 'mean-only', [b * 0.1]);
      tiny.record(b, 'covariance-only', [b * 0.05]);
    }
    const s = tiny.summarize();
    expect(s.overall).toBeCloseTo(0.8, 14); // variance ratio 4 : 1 (textbook scaling Var(cX) = c²Var(X))
    expect(s.overallErrorMethod).toBe('bound');
    expect(s.overallStdErr).toBe(0.5);
    const single = new ChannelVarianceAccumulator(1, 1);
    single.record(0, 'mean-only', [0.3]);
    single.record(0, 'covariance-only', [0.2]);
    expect(single.summarize().meanChannelVariance[0]).toBeNaN();
  });

  it('keeps its memory O(batches × N): independent of B beyond 300 draws', () => {
    expect(ChannelVarianceAccumulator.storedValues(5000, 100)).toBe(ChannelVarianceAccumulator.storedValues(300, 100));
    expect(ChannelVarianceAccumulator.storedValues(5000, 100)).toBe(2 * 30 * 100 * 12);
  });

  it('records 5000 draws × 200 assets × 2 channels quickly (streaming cost)', () => {
    const B = 5000;
    const n = 200;
    const acc = new ChannelVarianceAccumulator(B, n);
    const row = new Float64Array(n);
    const started = performance.now();
    for (let b = 0; b < B; b++) {
      for (let i = 0; i < n; i++) row[i] = 0.005 + 1e-3 * Math.sin(b * 0.7 + i);
      acc.record(b, 'mean-only', row);
      acc.record(b, 'covariance-only', row);
    }
    const elapsed = performance.now() - started;
    console.log(`channel variance: ${B} draws × ${n} assets × 2 channels in ${elapsed.toFixed(0)} ms`);
    expect(acc.summarize().overall).toBeCloseTo(0.5, 14);
  });
});
