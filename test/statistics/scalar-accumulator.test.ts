import { describe, expect, it } from 'vitest';
import { ScalarAccumulator } from '../../src/statistics/scalar-accumulator.js';
import { shuffledIndices } from '../helpers/draw-order.js';

// Order independence and merging are design requirements (draw b's slot is b); the statistics
// themselves are checked against numpy in test/reference/statistics.test.ts.
function valueOf(b: number): number {
  return b % 23 === 5 ? Number.NaN : Math.exp(Math.sin(b * 0.37)) * 0.01;
}

describe('ScalarAccumulator', () => {
  it('shuffled recording and merged ranges give bit-identical summaries', () => {
    const B = 500;
    const inOrder = new ScalarAccumulator(B);
    for (let b = 0; b < B; b++) inOrder.record(b, valueOf(b));
    const reordered = new ScalarAccumulator(B);
    for (const b of shuffledIndices(B, 'scalar')) reordered.record(b, valueOf(b));
    const first = new ScalarAccumulator(B);
    const second = new ScalarAccumulator(B);
    for (let b = 0; b < 250; b++) first.record(b, valueOf(b));
    for (let b = 250; b < B; b++) second.record(b, valueOf(b));
    second.merge(first); // merge order does not matter either
    const fromJson = ScalarAccumulator.fromState(JSON.parse(JSON.stringify(second.toState())));
    const expected = inOrder.summarize();
    expect(reordered.summarize()).toEqual(expected);
    expect(second.summarize()).toEqual(expected);
    expect(fromJson.summarize()).toEqual(expected);
    expect(expected.failedDraws).toBe(22);
    expect(expected.successfulDraws).toBe(478);
    expect(expected.quantileErrorMethod).toBe('order-statistic');
  });

  it('a range [start, end) holds end − start slots and merges into the whole run bit for bit', () => {
    const B = 500;
    const whole = new ScalarAccumulator(B);
    for (let b = 0; b < B; b++) whole.record(b, valueOf(b));
    const ranges = [
      [0, 137],
      [137, 300],
      [300, 500],
    ].map(([start, end]) => {
      const part = new ScalarAccumulator(B, { start, end });
      for (let b = start; b < end; b++) part.record(b, valueOf(b));
      return part;
    });
    expect(ranges.map((r) => [r.firstDraw, r.slotCount, r.slots().length])).toEqual([
      [0, 137, 137],
      [137, 163, 163],
      [300, 200, 200],
    ]);
    const merged = new ScalarAccumulator(B);
    for (const r of [ranges[2], ranges[0], ranges[1]]) merged.merge(r);
    expect(merged.summarize()).toEqual(whole.summarize());
    expect(Array.from(merged.slots())).toEqual(Array.from(whole.slots()));
    // A range's state round-trips with its offset.
    const again = ScalarAccumulator.fromState(JSON.parse(JSON.stringify(ranges[1].toState())));
    expect([again.firstDraw, again.slotCount, Array.from(again.slots())]).toEqual([137, 163, Array.from(ranges[1].slots())]);
    // Draws outside the range, merging a wider range into a narrower one, and summaries of a part are refused.
    expect(() => ranges[1].record(136, 1)).toThrow(/outside this accumulator's range/);
    expect(() => ranges[1].record(300, 1)).toThrow(/outside this accumulator's range/);
    expect(() => ranges[1].merge(whole)).toThrow(RangeError);
    expect(() => ranges[1].summarize()).toThrow(/every draw/);
    expect(() => new ScalarAccumulator(10, { start: 4, end: 4 })).toThrow(RangeError);
    expect(() => new ScalarAccumulator(10, { start: 0, end: 11 })).toThrow(RangeError);
  });

  it('excludes failed draws from every statistic', () => {
    const withFailures = new ScalarAccumulator(4);
    withFailures.record(0, 1);
    withFailures.recordFailure(1);
    withFailures.record(2, 3);
    withFailures.record(3, Number.POSITIVE_INFINITY);
    const clean = new ScalarAccumulator(2);
    clean.record(0, 1);
    clean.record(1, 3);
    const a = withFailures.summarize();
    const b = clean.summarize();
    expect(a.failedDraws).toBe(2);
    expect([a.mean, a.sd, a.p05, a.p50, a.p95]).toEqual([b.mean, b.sd, b.p05, b.p50, b.p95]);
    expect(a.mean).toBe(2);
    expect(a.sd).toBeCloseTo(Math.SQRT2, 15);
  });

  it('edge cases: B = 1, B = 2, all equal, nothing recorded', () => {
    const one = new ScalarAccumulator(1);
    one.record(0, 0.7);
    const s1 = one.summarize();
    expect([s1.mean, s1.p05, s1.p50, s1.p95]).toEqual([0.7, 0.7, 0.7, 0.7]);
    expect(s1.stdErr).toBeNaN();
    expect(s1.p50StdErr).toBeNaN();
    const two = new ScalarAccumulator(2);
    two.record(1, 4);
    two.record(0, 2);
    const s2 = two.summarize();
    expect(s2.p50).toBe(3);
    expect(s2.stdErr).toBe(1); // sd √2, /√2
    const equal = new ScalarAccumulator(120);
    for (let b = 0; b < 120; b++) equal.record(b, 0.1);
    const se = equal.summarize();
    expect([se.mean, se.sd, se.stdErr, se.p05, se.p95, se.p50StdErr, se.bandWidthStdErr]).toEqual([0.1, 0, 0, 0.1, 0.1, 0, 0]);
    const empty = new ScalarAccumulator(3).summarize();
    expect(empty.recordedDraws).toBe(0);
    expect(empty.mean).toBeNaN();
  });

  it('rejects double recording, overlapping merges and bad indices', () => {
    const a = new ScalarAccumulator(3);
    a.record(0, 1);
    expect(() => a.record(0, 2)).toThrow();
    expect(() => a.record(3, 2)).toThrow(RangeError);
    const b = new ScalarAccumulator(3);
    b.record(0, 1);
    expect(() => a.merge(b)).toThrow();
    expect(() => a.merge(new ScalarAccumulator(4))).toThrow(RangeError);
    expect(() => new ScalarAccumulator(0)).toThrow(RangeError);
  });
});
