import { describe, expect, it } from 'vitest';
import { EstimationError } from '../../src/estimate/errors.js';
import { createReturnHistory, requireRows, returnHistoryFromRows, selectedRowCount } from '../../src/estimate/history.js';

describe('return histories', () => {
  it('stores nested rows row-major', () => {
    const history = returnHistoryFromRows([
      [0.01, 0.02],
      [0.03, -0.04],
      [0.05, 0.06],
    ]);
    expect(history.periods).toBe(3);
    expect(history.series).toBe(2);
    expect(Array.from(history.values)).toEqual([0.01, 0.02, 0.03, -0.04, 0.05, 0.06]);
  });

  it('rejects ragged rows, wrong lengths and non-finite values with the position', () => {
    expect(() => returnHistoryFromRows([[1, 2], [3]])).toThrow(/row 1 has 1 values/);
    expect(() => createReturnHistory(new Float64Array(5), 2, 3)).toThrow(EstimationError);
    expect(() => createReturnHistory(Float64Array.from([1, 2, Number.NaN, 4]), 2, 2)).toThrow(/row 1, column 0/);
    expect(() => createReturnHistory(new Float64Array(0), 0, 2)).toThrow(/positive integers/);
  });

  it('counts selected rows and refuses indices outside the history', () => {
    const history = createReturnHistory(new Float64Array(8), 4, 2);
    expect(selectedRowCount(history, undefined)).toBe(4);
    expect(selectedRowCount(history, Int32Array.from([3, 3, 0, 1, 2, 2]))).toBe(6);
    expect(() => selectedRowCount(history, Int32Array.from([0, 4]))).toThrow(/index 4 at position 1/);
    expect(() => selectedRowCount(history, Int32Array.from([-1]))).toThrow(EstimationError);
  });

  it('names the estimate that lacks rows', () => {
    expect(() => requireRows(1, 2, 'a sample covariance')).toThrow(/a sample covariance needs at least 2 rows, got 1/);
    expect(() => requireRows(2, 2, 'x')).not.toThrow();
  });
});
