import fc from 'fast-check';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { estimateCovariance, sampleCovariance } from '../../src/estimate/covariance.js';
import { ewmaCovariance } from '../../src/estimate/ewma.js';
import { EstimationError } from '../../src/estimate/errors.js';
import { createReturnHistory, returnHistoryFromRows, type ReturnHistory } from '../../src/estimate/history.js';
import { ledoitWolfConstantCorrelation, ledoitWolfIdentity } from '../../src/estimate/ledoit-wolf.js';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';

function randomHistory(seed: string, periods: number, series: number): ReturnHistory {
  const rng = seedrandom(seed);
  return createReturnHistory(Float64Array.from({ length: periods * series }, () => 0.1 * (rng() - 0.5)), periods, series);
}

function copyRows(history: ReturnHistory, rows: Int32Array): ReturnHistory {
  const n = history.series;
  const values = new Float64Array(rows.length * n);
  rows.forEach((r, p) => values.set(history.values.subarray(r * n, (r + 1) * n), p * n));
  return createReturnHistory(values, rows.length, n);
}

describe('sampleCovariance (divisor T − 1)', () => {
  it('matches the definition on a small worked example', () => {
    // Means (2, 3); deviations (−1, −1), (0, 1), (1, 0): S = [[2, 1], [1, 2]] / (3 − 1).
    const estimate = sampleCovariance(returnHistoryFromRows([[1, 2], [2, 4], [3, 3]]));
    expect(Array.from(estimate.model.cov)).toEqual([1, 0.5, 0.5, 1]);
    expect(estimate.effectiveObservations).toBe(3);
    expect(estimate.shrinkage).toBe(0);
  });

  it('scales with the square of the data and ignores a shift (bilinearity of covariance)', () => {
    const history = randomHistory('bilinear', 30, 4);
    const base = sampleCovariance(history).model.cov;
    const moved = sampleCovariance(createReturnHistory(history.values.map((v, i) => 3 * v + 0.01 * (i % 4)), 30, 4)).model.cov;
    for (let i = 0; i < base.length; i++) expect(moved[i]).toBeCloseTo(9 * base[i], 15);
  });

  it('over a row selection equals the estimate on the copied rows', () => {
    const history = randomHistory('selection', 25, 6);
    const workspace = new EstimationWorkspace();
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 24 }), { minLength: 2, maxLength: 40 }), (picks) => {
        const rows = Int32Array.from(picks);
        const viaIndex = sampleCovariance(history, { rows, workspace }).model.cov;
        const viaCopy = sampleCovariance(copyRows(history, rows)).model.cov;
        for (let i = 0; i < viaCopy.length; i++) expect(Math.abs(viaIndex[i] - viaCopy[i])).toBeLessThan(1e-17);
      }),
      { numRuns: 60 },
    );
  });

  it('reuses the output buffer and workspace across calls of different sizes', () => {
    const history = randomHistory('reuse', 40, 3);
    const workspace = new EstimationWorkspace();
    const out = new Float64Array(9);
    const long = sampleCovariance(history, { rows: Int32Array.from({ length: 40 }, (_, p) => 39 - p), out, workspace });
    expect(long.model.cov).toBe(out);
    const short = Array.from(sampleCovariance(history, { rows: Int32Array.from([0, 5, 9]), out, workspace }).model.cov);
    const fresh = Array.from(sampleCovariance(copyRows(history, Int32Array.from([0, 5, 9]))).model.cov);
    expect(short).toEqual(fresh);
    expect(() => sampleCovariance(history, { out: new Float64Array(4) })).toThrow(RangeError);
  });

  it('needs two rows', () => {
    const history = randomHistory('short', 3, 2);
    expect(() => sampleCovariance(history, { rows: Int32Array.from([1]) })).toThrow(EstimationError);
  });
});

describe('estimateCovariance', () => {
  it('dispatches to each estimator with the same result as a direct call', () => {
    const history = randomHistory('dispatch', 50, 4);
    const rows = Int32Array.from({ length: 50 }, (_, p) => (p * 7) % 50);
    expect(estimateCovariance(history, { method: 'sample' }, { rows }).model.cov).toEqual(sampleCovariance(history, { rows }).model.cov);
    expect(estimateCovariance(history, { method: 'ledoit-wolf' }, { rows })).toEqual(ledoitWolfIdentity(history, { rows }));
    expect(estimateCovariance(history, { method: 'ledoit-wolf-constant-correlation' }, { rows })).toEqual(
      ledoitWolfConstantCorrelation(history, { rows }),
    );
    expect(estimateCovariance(history, { method: 'ewma', decay: 0.9, mean: 'weighted' }, { rows })).toEqual(
      ewmaCovariance(history, { rows, decay: 0.9, mean: 'weighted' }),
    );
  });
});
