import { describe, expect, it } from 'vitest';
import { historyMeanBlockLength, optimalBlockLength } from '../../src/resample/block-length.js';
import { ar1Path, parkMillerUniforms } from '../helpers/reference-data.js';

// Behaviour of the aggregation and guard rules around the arch-matching core (the arch values
// themselves are checked in test/reference/block-length.test.ts).

function columns(cols: number[][]): Float64Array {
  const nRows = cols[0].length;
  const out = new Float64Array(nRows * cols.length);
  for (let t = 0; t < nRows; t++) for (let j = 0; j < cols.length; j++) out[t * cols.length + j] = cols[j][t];
  return out;
}

describe('optimalBlockLength', () => {
  it('a constant series gets 1 (no dependence to preserve)', () => {
    expect(optimalBlockLength([2, 2, 2, 2, 2, 2, 2, 2, 2, 2])).toEqual({ stationary: 1, circular: 1 });
  });

  it('is invariant to shifting and scaling the series (autocorrelation-based)', () => {
    const x = ar1Path(5, 400, 0.6);
    const a = optimalBlockLength(x);
    const b = optimalBlockLength(x.map((v) => 3 * v + 7));
    expect(b.stationary).toBeCloseTo(a.stationary, 10);
  });

  it('grows with persistence (Politis & White 2004: b ∝ (G/σ²)^{2/3})', () => {
    const lengths = [0.2, 0.5, 0.8].map((phi) => optimalBlockLength(ar1Path(9, 1000, phi)).stationary);
    expect(lengths[0]).toBeLessThan(lengths[1]);
    expect(lengths[1]).toBeLessThan(lengths[2]);
  });

  it('handles series shorter than arch accepts (n ≤ 8) without NaN', () => {
    for (const n of [2, 3, 5, 8]) {
      const r = optimalBlockLength(ar1Path(3, n, 0.5));
      expect(Number.isFinite(r.stationary)).toBe(true);
      expect(r.stationary).toBeLessThanOrEqual(Math.ceil(Math.min(3 * Math.sqrt(n), n / 3)));
    }
    expect(() => optimalBlockLength([1])).toThrow(RangeError);
  });
});

describe('historyMeanBlockLength', () => {
  const a = ar1Path(21, 300, 0.1);
  const b = ar1Path(22, 300, 0.5);
  const c = ar1Path(23, 300, 0.9);
  const data = columns([a, b, c]);
  const perColumn = [a, b, c].map((x) => optimalBlockLength(x).stationary);

  it('mean (default), median and max rules over the per-column lengths', () => {
    expect(historyMeanBlockLength(data, 300, 3).meanBlockLength).toBeCloseTo((perColumn[0] + perColumn[1] + perColumn[2]) / 3, 12);
    expect(historyMeanBlockLength(data, 300, 3, 'median').meanBlockLength).toBeCloseTo([...perColumn].sort((x, y) => x - y)[1], 12);
    expect(historyMeanBlockLength(data, 300, 3, 'max').meanBlockLength).toBeCloseTo(Math.max(...perColumn), 12);
    const even = historyMeanBlockLength(columns([a, b, c, b]), 300, 4, 'median');
    const sorted = [perColumn[0], perColumn[1], perColumn[2], perColumn[1]].sort((x, y) => x - y);
    expect(even.meanBlockLength).toBeCloseTo((sorted[1] + sorted[2]) / 2, 12);
    expect(Array.from(historyMeanBlockLength(data, 300, 3).perColumn)).toEqual(perColumn);
  });

  it('clamps to at least 1 (white noise can give less) and at most the number of rows', () => {
    const noise = parkMillerUniforms(31, 40).map((u) => u - 0.5); // Park–Miller LCG (REFERENCES.md)
    const raw = optimalBlockLength(noise).stationary;
    const result = historyMeanBlockLength(Float64Array.from(noise), 40, 1);
    expect(result.meanBlockLength).toBe(Math.max(1, raw));
    expect(result.meanBlockLength).toBeGreaterThanOrEqual(1);
    const tiny = historyMeanBlockLength(Float64Array.from([1, 2, 3]), 3, 1);
    expect(tiny.meanBlockLength).toBeGreaterThanOrEqual(1);
    expect(tiny.meanBlockLength).toBeLessThanOrEqual(3);
  });

  it('rejects a buffer too small for the stated shape', () => {
    expect(() => historyMeanBlockLength(new Float64Array(5), 3, 2)).toThrow(RangeError);
  });
});
