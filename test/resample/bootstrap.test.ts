import { describe, expect, it } from 'vitest';
import {
  drawBootstrapIndices,
  gatherRows,
  iidBootstrapIndices,
  stationaryBootstrapIndices,
} from '../../src/resample/bootstrap.js';
import { createDrawStream } from '../../src/resample/streams.js';

// Stationary bootstrap structure (Politis & Romano 1994, JASA 89(428)): after each index the
// block continues (next row, circular) with probability 1 − p, otherwise a uniform row starts a
// new block — which can also land on the next row, so P(next = current + 1 mod n) = 1 − p + p/n.
// Bounds: 5 standard errors of a binomial proportion.

const Z = 5;

describe('stationaryBootstrapIndices', () => {
  it('indices stay in range and continue blocks at rate 1 − p + p/n, wrapping from the last row to the first', () => {
    const nRows = 50;
    const meanBlockLength = 8;
    const p = 1 / meanBlockLength;
    const out = new Int32Array(5000);
    const stream = createDrawStream('structure', 0, 'rows');
    let steps = 0;
    let continued = 0;
    let wraps = 0;
    let outOfRange = 0;
    for (let rep = 0; rep < 20; rep++) {
      stationaryBootstrapIndices(stream, nRows, meanBlockLength, out);
      for (let t = 0; t < out.length; t++) {
        if (out[t] < 0 || out[t] >= nRows) outOfRange++;
        if (t === 0) continue;
        steps++;
        if (out[t] === (out[t - 1] + 1) % nRows) continued++;
        if (out[t - 1] === nRows - 1 && out[t] === 0) wraps++;
      }
    }
    expect(outOfRange).toBe(0);
    const expected = 1 - p + p / nRows;
    expect(Math.abs(continued / steps - expected)).toBeLessThan(Z * Math.sqrt((expected * (1 - expected)) / steps));
    // Wrap-around happens: after row n−1 the chain continues to row 0 as often as elsewhere.
    expect(wraps).toBeGreaterThan(0);
  });

  it('meanBlockLength = 1 continues only by chance (p = 1: the iid law, rate 1/n)', () => {
    const nRows = 10;
    const out = new Int32Array(100_000);
    stationaryBootstrapIndices(createDrawStream('p1', 0), nRows, 1, out);
    let continued = 0;
    for (let t = 1; t < out.length; t++) if (out[t] === (out[t - 1] + 1) % nRows) continued++;
    const rate = 1 / nRows;
    expect(Math.abs(continued / (out.length - 1) - rate)).toBeLessThan(Z * Math.sqrt((rate * (1 - rate)) / out.length));
  });

  it('fills an output longer or shorter than the data', () => {
    const long = stationaryBootstrapIndices(createDrawStream('len', 0), 5, 3, new Int32Array(37));
    expect(long.every((i) => i >= 0 && i < 5)).toBe(true);
    const short = stationaryBootstrapIndices(createDrawStream('len', 1), 100, 3, new Int32Array(3));
    expect(short.every((i) => i >= 0 && i < 100)).toBe(true);
  });

  it('rejects a mean block length below 1 or rows below 1', () => {
    const s = createDrawStream('bad', 0);
    expect(() => stationaryBootstrapIndices(s, 10, 0.5, new Int32Array(10))).toThrow(RangeError);
    expect(() => stationaryBootstrapIndices(s, 10, Number.NaN, new Int32Array(10))).toThrow(RangeError);
    expect(() => iidBootstrapIndices(s, 0, new Int32Array(10))).toThrow(RangeError);
  });
});

describe('drawBootstrapIndices: draw b depends only on (seed, b)', () => {
  it('same indices whatever order draws are made in, and for either scheme', () => {
    for (const scheme of ['iid-bootstrap', 'stationary-bootstrap'] as const) {
      const forward = Array.from({ length: 12 }, (_, b) =>
        Array.from(drawBootstrapIndices('seed', b, scheme, 40, 4, new Int32Array(40))),
      );
      for (const b of [11, 0, 5, 3, 9, 1, 10, 2, 8, 4, 7, 6]) {
        drawBootstrapIndices('seed', b + 100, scheme, 40, 4, new Int32Array(40)); // unrelated draw in between
        expect(Array.from(drawBootstrapIndices('seed', b, scheme, 40, 4, new Int32Array(40)))).toEqual(forward[b]);
      }
      expect(forward[0]).not.toEqual(forward[1]);
      expect(Array.from(drawBootstrapIndices('other', 0, scheme, 40, 4, new Int32Array(40)))).not.toEqual(forward[0]);
    }
  });

  it("uses the 'rows' sub-stream, independent of the 'mean' and 'cov' ones", () => {
    const fromHelper = drawBootstrapIndices(7, 3, 'iid-bootstrap', 20, 1, new Int32Array(20));
    const direct = iidBootstrapIndices(createDrawStream(7, 3, 'rows'), 20, new Int32Array(20));
    expect(Array.from(fromHelper)).toEqual(Array.from(direct));
  });
});

describe('gatherRows', () => {
  it('copies the listed rows in order', () => {
    const source = Float64Array.from([1, 2, 3, 10, 20, 30, 100, 200, 300]); // 3×3
    const out = gatherRows(source, 3, Int32Array.from([2, 0, 2, 1]), new Float64Array(12));
    expect(Array.from(out)).toEqual([100, 200, 300, 1, 2, 3, 100, 200, 300, 10, 20, 30]);
    expect(() => gatherRows(source, 3, Int32Array.from([0, 1]), new Float64Array(5))).toThrow(RangeError);
  });
});
