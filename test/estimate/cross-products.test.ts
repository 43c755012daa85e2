import { describe, expect, it } from 'vitest';
import { columnCrossProducts, columnDot, demeanedColumns, gatherCentredColumns } from '../../src/estimate/cross-products.js';
import { returnHistoryFromRows } from '../../src/estimate/history.js';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';

const history = returnHistoryFromRows([
  [1, 10],
  [2, 20],
  [4, 40],
]);

describe('column kernels', () => {
  it('lays the selected rows out column by column, centred and scaled per row', () => {
    const columns = new Float64Array(6);
    gatherCentredColumns(history, Int32Array.from([2, 0, 0]), 3, Float64Array.from([1, 10]), Float64Array.from([1, 2, 3]), columns);
    // Series 0: (4−1)·1, (1−1)·2, (1−1)·3; series 1: (40−10)·1, 0, 0.
    expect(Array.from(columns)).toEqual([3, 0, 0, 30, 0, 0]);
    gatherCentredColumns(history, undefined, 3, undefined, undefined, columns);
    expect(Array.from(columns)).toEqual([1, 2, 4, 10, 20, 40]);
  });

  it('forms symmetric scaled cross products of the columns', () => {
    const columns = Float64Array.from([1, 2, 4, 10, 20, 40]);
    expect(columnDot(columns, 0, columns, 3, 3)).toBe(210);
    const out = columnCrossProducts(columns, 2, 3, 0.5, new Float64Array(4));
    expect(Array.from(out)).toEqual([10.5, 105, 105, 1050]);
  });

  it('demeans with the mean of the selected rows', () => {
    const mean = new Float64Array(2);
    const columns = demeanedColumns(history, Int32Array.from([0, 1]), 2, mean, new Float64Array(4));
    expect(Array.from(columns)).toEqual([-0.5, 0.5, -5, 5]);
    expect(Array.from(mean)).toEqual([1.5, 15]);
  });
});

describe('EstimationWorkspace', () => {
  it('returns the same buffer while it is large enough and a larger one when not', () => {
    const workspace = new EstimationWorkspace();
    const first = workspace.buffer('a', 10);
    expect(workspace.buffer('a', 4)).toBe(first);
    expect(workspace.buffer('b', 4)).not.toBe(first);
    const grown = workspace.buffer('a', 11);
    expect(grown.length).toBe(11);
    expect(workspace.buffer('a', 11)).toBe(grown);
  });
});
