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
  it('is bit-identical for shuffled order, split ranges, merge order and a wire round trip', () => {
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
    // The wire form (how ranges travel between threads and shards) carries it exactly.
    const whole = { start: 0, end: B };
    const size = ChannelVarianceAccumulator.wireSize(B, N, whole);
    const cursor = { f64: new Float64Array(size.f64), f64At: 0, u8: new Uint8Array(size.u8), u8At: 0 };
    parts[2].writeWire(whole, cursor);
    const roundTrip = new ChannelVarianceAccumulator(B, N);
    roundTrip.readWire(whole, { ...cursor, f64At: 0, u8At: 0 });
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

  it('holds only its own batches when sized to a range, and merges and round-trips the wire form exactly', () => {
    const B = 437;
    const row = new Float64Array(N);
    const fill = (acc: ChannelVarianceAccumulator, from: number, to: number): void => {
      for (let b = from; b < to; b++) {
        acc.record(b, 'mean-only', rowOf(b, 'mean', 0.1, row));
        if (b % 40 === 7) acc.recordFailure(b, 'covariance-only');
        else acc.record(b, 'covariance-only', rowOf(b, 'cov', 0.05, row));
      }
    };
    const whole = new ChannelVarianceAccumulator(B, N);
    fill(whole, 0, B);
    // Cuts inside batches (30 batches of 14–15 draws), so batches are split between ranges.
    const cuts = [0, 20, 21, 250, 437];
    const merged = new ChannelVarianceAccumulator(B, N);
    const viaWire = new ChannelVarianceAccumulator(B, N);
    for (let k = 0; k + 1 < cuts.length; k++) {
      const range = { start: cuts[k], end: cuts[k + 1] };
      const part = new ChannelVarianceAccumulator(B, N, range);
      fill(part, range.start, range.end);
      // A range's memory: its own draws' status and the batches it touches, not the whole run's.
      expect(part.storedValueCount).toBeLessThan(whole.storedValueCount);
      expect(part.batchSpan).toBeLessThanOrEqual(Math.ceil((range.end - range.start) / 14) + 1);
      expect(() => part.record(range.end % B === 0 ? 0 : range.end, 'mean-only', row)).toThrow(/outside this accumulator's range/);
      merged.merge(part);
      const size = ChannelVarianceAccumulator.wireSize(B, N, range);
      const cursor = { f64: new Float64Array(size.f64), f64At: 0, u8: new Uint8Array(size.u8), u8At: 0 };
      part.writeWire(range, cursor);
      expect([cursor.f64At, cursor.u8At]).toEqual([size.f64, size.u8]);
      cursor.f64At = 0;
      cursor.u8At = 0;
      viaWire.readWire(range, cursor);
    }
    const expected = whole.summarize();
    expect(merged.summarize()).toEqual(expected);
    expect(viaWire.summarize()).toEqual(expected);
    expect(expected.covarianceChannelFailures).toBe(11);
    // A range cannot be summarised on its own (its batches are incomplete).
    const part = new ChannelVarianceAccumulator(B, N, { start: 0, end: 100 });
    expect(() => part.summarize()).toThrow(/needs the accumulator of every draw/);
    // A draw recorded twice is refused, by merge and by the wire form alike.
    const twice = new ChannelVarianceAccumulator(B, N, { start: 0, end: 20 });
    fill(twice, 0, 20);
    expect(() => merged.merge(twice)).toThrow(/recorded in both/);
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
    const one = meanOnly.summarize({ covarianceChannelFixed: true });
    expect(one.overall).toBe(1);
    expect(Array.from(one.perAsset)).toEqual([1, 1, 1, 1]);
    expect(Array.from(one.covarianceChannelVariance)).toEqual([0, 0, 0, 0]);
    expect([one.overallStdErr, one.overallErrorMethod]).toEqual([0, 'exact']);
    // A method that ignores the means: the share is 0 by construction, its error exactly 0.
    const zero = covarianceOnly.summarize({ meanChannelFixed: true });
    expect(zero.overall).toBe(0);
    expect(Array.from(zero.perAsset)).toEqual([0, 0, 0, 0]);
    expect([zero.overallStdErr, zero.overallErrorMethod]).toEqual([0, 'exact']);
    // The same draws from a channel that could have moved but did not: the share is 1 (or 0) as
    // far as these draws show, but a rare move none of them made would change it, so no error is claimed.
    const unseen = meanOnly.summarize();
    expect(unseen.overall).toBe(1);
    expect(unseen.overallErrorMethod).toBe('not-estimable');
    expect(unseen.overallStdErr).toBeNaN();
    expect(unseen.covarianceChannelEffectiveGroups).toBe(0);
    // Rule of three: no move in 200 draws ⇒ rate < 3/200, so ≥ 200·5/3 draws for about 5 moves.
    expect(unseen.drawsForEstimableError).toBe(334);
    expect(covarianceOnly.summarize().overallErrorMethod).toBe('not-estimable');
  });

  it('a channel that moves in one rare draw: not estimable; moves spread over the groups: jackknife', () => {
    // Kish (1965, Survey Sampling §11.7): effective number (Σ T_k)²/Σ T_k² is 1 when one group
    // carries all the spread and m when all m groups carry the same.
    const B = 200;
    const row = new Float64Array(N);
    const corner = Float64Array.of(0, 1, 0, 0);
    const moved = Float64Array.of(0.1, 0.9, 0, 0);
    const rare = new ChannelVarianceAccumulator(B, N);
    const spread = new ChannelVarianceAccumulator(B, N);
    for (let b = 0; b < B; b++) {
      rare.record(b, 'mean-only', rowOf(b, 'mean', 0.1, row));
      spread.record(b, 'mean-only', rowOf(b, 'mean', 0.1, row));
      rare.record(b, 'covariance-only', b === 57 ? moved : corner);
      // One move in every group of 10 draws (20 groups).
      spread.record(b, 'covariance-only', b % 10 === 3 ? moved : corner);
    }
    const one = rare.summarize();
    // By hand, per moved asset with deviation d: the moved draw's group holds 0.9d² within and
    // 10(d/10 − d/200)² = 0.09025d² between; each of the other 19 groups 10(d/200)² = 0.00025d².
    // (0.995)²/(0.99025² + 19·0.00025²) = 1.0096153…
    expect(one.covarianceChannelEffectiveGroups).toBeCloseTo(0.990025 / (0.99025 ** 2 + 19 * 0.00025 ** 2), 9);
    expect(one.meanChannelEffectiveGroups).toBeGreaterThan(15);
    expect(one.overall).toBeLessThan(1);
    expect(one.overallErrorMethod).toBe('not-estimable');
    expect(one.overallStdErr).toBeNaN();
    // One effective group in 200 draws: about 200·5/1 draws give five.
    expect(one.drawsForEstimableError).toBeGreaterThanOrEqual(990);
    expect(one.drawsForEstimableError).toBeLessThanOrEqual(1000);
    const many = spread.summarize();
    expect(many.covarianceChannelEffectiveGroups).toBeCloseTo(20, 6);
    expect(many.overallErrorMethod).toBe('jackknife');
    expect(many.overallStdErr).toBeGreaterThan(0);
  });

  it('rare moves (Poisson, λ per run): null when a run cannot show them, calibrated when it can', () => {
    // Across reruns the share's sd over the mean reported error should be about 1 (common
    // practice for judging a standard error). Without the rule a run seeing λ ≈ 1 move reports
    // on average λ·δ against a true spread √λ·δ (ratio 1/√λ); with it such runs report null.
    const B = 200;
    const K = 200;
    const row = new Float64Array(N);
    const run = (lambda: number, seed: number): { share: number; stdErr: number } => {
      const random = seedrandom(`rare-${lambda}-${seed}`);
      const acc = new ChannelVarianceAccumulator(B, N);
      for (let b = 0; b < B; b++) {
        for (let i = 0; i < N; i++) row[i] = 0.25 + 0.3 * (random() - 0.5);
        acc.record(b, 'mean-only', row);
        row.fill(0);
        row[1] = 1;
        if (random() < lambda / B) {
          const d = 0.05 + 0.3 * random();
          row[0] = d;
          row[1] = 1 - d;
        }
        acc.record(b, 'covariance-only', row);
      }
      const s = acc.summarize();
      return { share: s.overall, stdErr: s.overallStdErr };
    };
    const rare = Array.from({ length: K }, (_, s) => run(1, s));
    expect(rare.filter((r) => Number.isNaN(r.stdErr)).length).toBeGreaterThanOrEqual(K - 2);
    const frequent = Array.from({ length: K }, (_, s) => run(50, s));
    expect(frequent.every((r) => Number.isFinite(r.stdErr))).toBe(true);
    const mean = frequent.reduce((a, r) => a + r.share, 0) / K;
    const spread = Math.sqrt(frequent.reduce((a, r) => a + (r.share - mean) ** 2, 0) / (K - 1));
    const meanError = frequent.reduce((a, r) => a + r.stdErr, 0) / K;
    // The ratio's own noise with K = 200 is about 1/√(2(K−1)) = 5 %.
    expect(spread / meanError).toBeGreaterThan(0.8);
    expect(spread / meanError).toBeLessThan(1.2);
  });

  it('both channels constant (e.g. equal weight): share 0; tiny B: conservative error 0.5', () => {
    const flat = new ChannelVarianceAccumulator(30, 2);
    for (let b = 0; b < 30; b++) {
      flat.record(b, 'mean-only', [0.5, 0.5]);
      flat.record(b, 'covariance-only', [0.5, 0.5]);
    }
    expect(flat.summarize().overall).toBe(0);
    expect(flat.summarize().overallStdErr).toBe(0);
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
