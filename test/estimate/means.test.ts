import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { createReturnHistory, returnHistoryFromRows } from '../../src/estimate/history.js';
import { sampleMean } from '../../src/estimate/means.js';

describe('sampleMean', () => {
  it('averages each column (arithmetic mean)', () => {
    const history = returnHistoryFromRows([
      [0.01, -0.02],
      [0.03, 0.04],
      [0.05, 0.07],
    ]);
    const mean = sampleMean(history);
    expect(mean[0]).toBeCloseTo(0.03, 15);
    expect(mean[1]).toBeCloseTo(0.03, 15);
  });

  it('over selected rows equals the mean of the copied rows, repeats included', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 12 }),
        fc.integer({ min: 1, max: 5 }),
        fc.array(fc.double({ min: -0.5, max: 0.5, noNaN: true }), { minLength: 60, maxLength: 60 }),
        fc.array(fc.nat(), { minLength: 1, maxLength: 20 }),
        (periods, series, pool, picks) => {
          const values = Float64Array.from({ length: periods * series }, (_, i) => pool[i % pool.length]);
          const history = createReturnHistory(values, periods, series);
          const rows = Int32Array.from(picks.map((p) => p % periods));
          const copied = new Float64Array(rows.length * series);
          rows.forEach((r, p) => copied.set(values.subarray(r * series, (r + 1) * series), p * series));
          const expected = sampleMean(createReturnHistory(copied, rows.length, series));
          const actual = sampleMean(history, { rows });
          for (let j = 0; j < series; j++) expect(actual[j]).toBe(expected[j]);
        },
      ),
      { numRuns: 100 },
    );
  });

  it('writes into the caller buffer and checks its length', () => {
    const history = returnHistoryFromRows([
      [1, 2],
      [3, 4],
    ]);
    const out = new Float64Array(2);
    expect(sampleMean(history, { out })).toBe(out);
    expect(Array.from(out)).toEqual([2, 3]);
    expect(() => sampleMean(history, { out: new Float64Array(3) })).toThrow(RangeError);
  });
});
