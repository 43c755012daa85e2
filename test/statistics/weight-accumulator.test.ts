import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { DEFAULT_SELECTION_THRESHOLD, MIN_DRAWS_OFF_MODE, storedValues, WeightAccumulator } from '../../src/statistics/weight-accumulator.js';
import { shuffledIndices } from '../helpers/draw-order.js';

// Order independence and merging are design requirements; the band statistics are checked
// against numpy/scipy in test/reference/statistics.test.ts.
const N = 3;

function weightsOf(b: number, out: Float64Array): Float64Array {
  if (b % 41 === 7) {
    out.fill(Number.NaN);
    return out;
  }
  const random = seedrandom(`w-${b}`);
  const a = random();
  const c = random() < 0.3 ? 0 : random() * 0.2;
  out[0] = a * (1 - c);
  out[1] = (1 - a) * (1 - c);
  out[2] = c;
  return out;
}

describe('WeightAccumulator', () => {
  const proposal = [0.4, 0.5, 0.1];

  it('a range [start, end) holds (end − start) × N values and merges into the whole run bit for bit', () => {
    const B = 300;
    const row = new Float64Array(N);
    const whole = new WeightAccumulator(B, N);
    for (let b = 0; b < B; b++) whole.record(b, weightsOf(b, row));
    const parts = [
      [0, 100],
      [100, 101],
      [101, 300],
    ].map(([start, end]) => {
      const part = new WeightAccumulator(B, N, { start, end });
      for (let b = end - 1; b >= start; b--) part.record(b, weightsOf(b, row));
      return part;
    });
    expect(parts.map((p) => [p.firstDraw, p.slotCount, p.rows().length])).toEqual([
      [0, 100, storedValues(100, N)],
      [100, 1, storedValues(1, N)],
      [101, 199, storedValues(199, N)],
    ]);
    expect(Array.from(parts[2].rows().subarray(0, N))).toEqual(Array.from(whole.rows().subarray(101 * N, 102 * N)));
    const merged = new WeightAccumulator(B, N);
    for (const p of [parts[1], parts[2], parts[0]]) merged.merge(p);
    expect(merged.summarize(proposal)).toEqual(whole.summarize(proposal));
    expect(Array.from(merged.rows())).toEqual(Array.from(whole.rows()));
    const again = WeightAccumulator.fromState(JSON.parse(JSON.stringify(parts[2].toState())));
    expect([again.firstDraw, again.slotCount, Array.from(again.rows())]).toEqual([101, 199, Array.from(parts[2].rows())]);
    expect(() => parts[1].record(99, row)).toThrow(/outside this accumulator's range/);
    expect(() => parts[1].merge(parts[2])).toThrow(RangeError);
    expect(() => parts[0].summarize(proposal)).toThrow(/every draw/);
  });

  it('shuffled recording, merged ranges and a JSON round trip give bit-identical summaries', () => {
    const B = 300;
    const row = new Float64Array(N);
    const inOrder = new WeightAccumulator(B, N);
    for (let b = 0; b < B; b++) inOrder.record(b, weightsOf(b, row));
    const reordered = new WeightAccumulator(B, N);
    for (const b of shuffledIndices(B, 'weights')) reordered.record(b, weightsOf(b, row));
    const low = new WeightAccumulator(B, N);
    const high = new WeightAccumulator(B, N);
    for (let b = 0; b < 137; b++) low.record(b, weightsOf(b, row));
    for (let b = 137; b < B; b++) high.record(b, weightsOf(b, row));
    low.merge(high);
    const expected = inOrder.summarize(proposal);
    expect(reordered.summarize(proposal)).toEqual(expected);
    expect(low.summarize(proposal)).toEqual(expected);
    expect(WeightAccumulator.fromState(JSON.parse(JSON.stringify(low.toState()))).summarize(proposal)).toEqual(expected);
    expect(expected.failedDraws).toBe(8);
    expect(expected.selectionThreshold).toBe(DEFAULT_SELECTION_THRESHOLD);
    // Asset 2 is exactly 0 in about 30% of draws.
    expect(expected.perAsset[2].selectionRate).toBeGreaterThan(0.55);
    expect(expected.perAsset[2].selectionRate).toBeLessThan(0.85);
    expect(Array.from(expected.meanOfOptima)).toEqual(expected.perAsset.map((a) => a.mean));
  });

  it('excludes failed rows, records from an offset and counts selection against the threshold', () => {
    const acc = new WeightAccumulator(3, 2);
    acc.record(0, [9, 0.2, 0.8], 1);
    acc.record(1, [0.5, Number.NaN]);
    acc.record(2, [0.00005, 0.99995]);
    const s = acc.summarize([0.2, 0.8]);
    expect(s.failedDraws).toBe(1);
    expect(s.perAsset[0].mean).toBeCloseTo(0.100025, 15);
    expect(s.perAsset[0].selectionRate).toBe(0.5); // 5e-5 is below one basis point
    expect(acc.summarize([0.2, 0.8], 1e-5).perAsset[0].selectionRate).toBe(1);
    expect(s.perAsset[0].proposalPercentile).toBe(75); // one below, one equal of 2
  });

  it('edge cases: B = 1, B = 2, all draws equal', () => {
    const one = new WeightAccumulator(1, 2);
    one.record(0, [0.3, 0.7]);
    const s1 = one.summarize([0.3, 0.6]);
    expect(s1.perAsset[0].p05).toBe(0.3);
    expect(s1.perAsset[0].sd).toBeNaN();
    expect(s1.perAsset[0].bandStdErr).toBeNaN();
    expect(s1.perAsset[0].proposalPercentile).toBe(50);
    expect(s1.perAsset[1].proposalPercentile).toBe(0);
    const two = new WeightAccumulator(2, 1);
    two.record(0, [0.2]);
    two.record(1, [0.4]);
    expect(two.summarize([0.3]).perAsset[0].p50).toBeCloseTo(0.3, 15);
    const equal = new WeightAccumulator(150, 2);
    for (let b = 0; b < 150; b++) equal.record(b, [0.25, 0.75]);
    const se = equal.summarize([0.25, 0.5]);
    expect(se.perAsset[0]).toMatchObject({ mean: 0.25, sd: 0, p05: 0.25, p95: 0.25, bandStdErr: 0, sdStdErr: 0, selectionRate: 1, proposalPercentile: 50 });
    expect(se.perAsset[1].proposalPercentile).toBe(0);
  });

  it('a weight that leaves its bound in 1–4 draws has no readable mean or selection-rate error; 0 draws: exactly 0; 5: a number', () => {
    const B = 200;
    // Asset 0 at 0 except in `moved` draws (0.3 there); asset 1 takes the rest; asset 2 always 0.
    const summaryWith = (moved: number) => {
      const acc = new WeightAccumulator(B, N);
      for (let b = 0; b < B; b++) {
        const w0 = b < moved ? 0.3 : 0;
        acc.record(b, Float64Array.of(w0, 1 - w0, 0));
      }
      return acc.summarize(proposal).perAsset;
    };
    for (const moved of [1, MIN_DRAWS_OFF_MODE - 1]) {
      const [rare, rest, never] = summaryWith(moved);
      expect(rare.meanStdErr, `${moved} draws`).toBeNaN();
      expect(rare.selectionRateStdErr, `${moved} draws`).toBeNaN();
      // Asset 1 also leaves its usual value (1) in those draws only: the same.
      expect(rest.meanStdErr).toBeNaN();
      expect(never.meanStdErr).toBe(0);
      expect(never.selectionRateStdErr).toBe(0);
      // The percentiles keep their own rule (exact bootstrap; 0 where no rerun leaves the mass).
      expect(rare.p50StdErr).toBe(0);
    }
    const [five] = summaryWith(MIN_DRAWS_OFF_MODE);
    expect(five.meanStdErr).toBeCloseTo(Math.sqrt((5 * 195) / (200 * 199)) * 0.3 / Math.sqrt(200), 15);
    expect(five.selectionRateStdErr).toBeCloseTo(Math.sqrt((0.025 * 0.975) / 199), 15);
    expect(summaryWith(0)[0].meanStdErr).toBe(0);
  });

  it('reports its memory and rejects overlapping merges', () => {
    expect(storedValues(5000, 400)).toBe(2_000_000);
    const a = new WeightAccumulator(2, 1);
    const b = new WeightAccumulator(2, 1);
    a.record(1, [1]);
    b.recordFailure(1);
    expect(() => a.merge(b)).toThrow();
  });
});
