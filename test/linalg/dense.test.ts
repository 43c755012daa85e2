import { CholeskyDecomposition, Matrix, solve } from 'ml-matrix';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import {
  NotPositiveDefiniteError,
  choleskyAppend,
  choleskyDecompose,
  choleskyDeleteIndex,
  choleskyOrThrow,
  choleskyPsd,
  choleskyRankOneUpdate,
  choleskySolveInPlace,
  matTVec,
  matVec,
  solveLowerInPlace,
  solveLowerTransposeInPlace,
  solveSpd,
} from '../../src/linalg/dense.js';
import { parkMiller } from '../helpers/reference-data.js';

// Reference library: ml-matrix (general-purpose numerics) for Cholesky factors and linear solves.

function randomSpd(n: number, seed: string): Float64Array {
  const rng = seedrandom(seed);
  const m = n + 3;
  const x = Float64Array.from({ length: n * m }, () => rng() - 0.5);
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let k = 0; k < m; k++) s += x[i * m + k] * x[j * m + k];
      a[i * n + j] = s + (i === j ? 0.1 : 0);
    }
  }
  return a;
}

function toMatrix(a: Float64Array, n: number): Matrix {
  return new Matrix(Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, (i + 1) * n))));
}

function lowerOf(l: Float64Array, n: number, ld = n): Float64Array {
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) out[i * n + j] = l[i * ld + j];
  return out;
}

function maxDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

describe('Cholesky', () => {
  it('matches ml-matrix CholeskyDecomposition on random SPD matrices', () => {
    for (const n of [1, 2, 5, 17, 40]) {
      const a = randomSpd(n, `chol-${n}`);
      const ours = choleskyOrThrow(a, n);
      const ref = new CholeskyDecomposition(toMatrix(a, n)).lowerTriangularMatrix;
      expect(maxDiff(ours, ref.to1DArray())).toBeLessThan(1e-12);
    }
  });

  it('reports the index of the first non-positive pivot', () => {
    // Leading 2×2 block is positive definite; the third pivot is 1 − 0.9² − 0.81²/0.19 < 0.
    const a = Float64Array.from([1, 0.9, 0.9, 0.9, 1, 0.0, 0.9, 0.0, 1]);
    expect(choleskyDecompose(Float64Array.from(a), 3)).toBe(2);
    let caught: unknown;
    try {
      choleskyOrThrow(a, 3);
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(NotPositiveDefiniteError);
    expect((caught as NotPositiveDefiniteError).pivotIndex).toBe(2);
    expect((caught as NotPositiveDefiniteError).pivotValue).toBeLessThan(0);
    // A zero first pivot fails at index 0; a relative pivot floor catches near-singular pivots.
    expect(choleskyDecompose(Float64Array.from([0, 0, 0, 1]), 2)).toBe(0);
    expect(choleskyDecompose(Float64Array.from([1, 1, 1, 1 + 1e-14]), 2, undefined, 2, 1e-10)).toBe(1);
    expect(choleskyDecompose(Float64Array.from([1, 1, 1, 1 + 1e-14]), 2)).toBe(-1);
  });

  it('solves SPD systems like ml-matrix solve', () => {
    const n = 12;
    const a = randomSpd(n, 'solve');
    const b = Float64Array.from({ length: n }, (_, i) => Math.sin(i + 1));
    const ref = solve(toMatrix(a, n), Matrix.columnVector(Array.from(b))).to1DArray();
    expect(maxDiff(solveSpd(a, n, b), ref)).toBeLessThan(1e-11);
    // Triangular solves compose to the same answer.
    const l = choleskyOrThrow(a, n);
    const y = Float64Array.from(b);
    solveLowerInPlace(l, n, y);
    solveLowerTransposeInPlace(l, n, y);
    expect(maxDiff(y, ref)).toBeLessThan(1e-11);
  });

  it('works on a leading block of a larger buffer (leading dimension)', () => {
    const n = 6;
    const ld = 9;
    const a = randomSpd(n, 'ld');
    const big = new Float64Array(ld * ld).fill(Number.NaN);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) big[i * ld + j] = a[i * n + j];
    expect(choleskyDecompose(big, n, big, ld)).toBe(-1);
    expect(maxDiff(lowerOf(big, n, ld), choleskyOrThrow(a, n))).toBeLessThan(1e-13);
    const b = Float64Array.from({ length: n }, (_, i) => i - 2);
    const x = choleskySolveInPlace(big, n, Float64Array.from(b), ld);
    expect(maxDiff(x, solveSpd(a, n, b))).toBeLessThan(1e-12);
  });
});

describe('Cholesky updates', () => {
  it('rank-one update equals refactoring A + vvᵀ', () => {
    const n = 9;
    const a = randomSpd(n, 'update');
    const v = Float64Array.from({ length: n }, (_, i) => Math.cos(3 * i));
    const l = choleskyOrThrow(a, n);
    choleskyRankOneUpdate(l, n, Float64Array.from(v));
    const updated = new Float64Array(a);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) updated[i * n + j] += v[i] * v[j];
    expect(maxDiff(lowerOf(l, n), choleskyOrThrow(updated, n))).toBeLessThan(1e-12);
  });

  it('deleting an index equals factoring the submatrix', () => {
    const n = 8;
    const a = randomSpd(n, 'delete');
    for (const k of [0, 3, 7]) {
      const l = choleskyOrThrow(a, n);
      choleskyDeleteIndex(l, n, k, new Float64Array(n));
      const keep = Array.from({ length: n }, (_, i) => i).filter((i) => i !== k);
      const sub = new Float64Array((n - 1) * (n - 1));
      keep.forEach((i, r) => keep.forEach((j, c) => (sub[r * (n - 1) + c] = a[i * n + j])));
      const ref = choleskyOrThrow(sub, n - 1);
      // The deleted factor lives in the leading (n−1)×(n−1) block with stride n.
      expect(maxDiff(lowerOf(l, n - 1, n), ref)).toBeLessThan(1e-12);
    }
  });

  it('appending a row/column equals factoring the bordered matrix, and refuses a singular border', () => {
    const n = 7;
    const a = randomSpd(n, 'append');
    const ld = n;
    const l = new Float64Array(ld * ld);
    const lead = choleskyOrThrow(sliceLeading(a, n, n - 1), n - 1);
    for (let i = 0; i < n - 1; i++) for (let j = 0; j <= i; j++) l[i * ld + j] = lead[i * (n - 1) + j];
    const col = Float64Array.from({ length: n - 1 }, (_, i) => a[i * n + n - 1]);
    expect(choleskyAppend(l, n - 1, col, a[n * n - 1], ld)).toBe(true);
    expect(maxDiff(lowerOf(l, n), choleskyOrThrow(a, n))).toBeLessThan(1e-12);
    // Border that duplicates column 0 exactly: the new pivot is 0 → refused.
    const lead3 = choleskyOrThrow(sliceLeading(a, n, 3), 3);
    const l2 = new Float64Array(4 * 4);
    for (let i = 0; i < 3; i++) for (let j = 0; j <= i; j++) l2[i * 4 + j] = lead3[i * 3 + j];
    const dup = Float64Array.from([a[0], a[n], a[2 * n]]);
    expect(choleskyAppend(l2, 3, dup, a[0], 4, 1e-12)).toBe(false);
    expect(l2[3 * 4 + 3]).toBe(0); // the leading factor is left as it was
  });
});

describe('choleskyPsd (positive semi-definite input)', () => {
  // Checked against ml-matrix's CholeskyDecomposition (general-purpose reference library) and by
  // reconstruction L Lᵀ = A.

  function reconstruct(l: Float64Array, n: number): Float64Array {
    const out = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += l[i * n + k] * l[j * n + k];
      out[i * n + j] = s;
    }
    return out;
  }

  /** A = G Gᵀ for a G from the Park–Miller LCG (REFERENCES.md generator): SPD when G has full rank. */
  function gram(n: number, rank: number, seed: number): Float64Array {
    const next = parkMiller(seed);
    const g = Float64Array.from({ length: n * rank }, () => next() - 0.5);
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
      let v = 0;
      for (let k = 0; k < rank; k++) v += g[i * rank + k] * g[j * rank + k];
      a[i * n + j] = v;
    }
    return a;
  }

  it('matches ml-matrix on an SPD matrix (8×8) and reconstructs it', () => {
    const n = 8;
    const a = gram(n, 12, 99);
    const l = choleskyPsd(a, n);
    const reference = new CholeskyDecomposition(toMatrix(a, n)).lowerTriangularMatrix.to1DArray();
    expect(maxDiff(l, reference)).toBeLessThan(1e-13);
    expect(maxDiff(reconstruct(l, n), a)).toBeLessThan(1e-14);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) expect(l[i * n + j]).toBe(0);
    // Same recurrence as the strict kernel (Golub & Van Loan §4.2): identical factor on SPD input.
    expect(Array.from(l)).toEqual(Array.from(choleskyOrThrow(a, n)));
  });

  it('accepts a singular PSD matrix (rank 3 of 6) and still reconstructs it', () => {
    const n = 6;
    const a = gram(n, 3, 7);
    const l = choleskyPsd(a, n);
    expect(maxDiff(reconstruct(l, n), a)).toBeLessThan(1e-12);
  });

  it('throws on a matrix that is not PSD', () => {
    expect(() => choleskyPsd(Float64Array.from([1, 2, 2, 1]), 2)).toThrow(RangeError);
  });
});

describe('matrix-vector products', () => {
  it('matVec and matTVec agree with ml-matrix', () => {
    const rows = 4;
    const cols = 3;
    const a = Float64Array.from({ length: rows * cols }, (_, i) => i * 0.5 - 2);
    const m = new Matrix(Array.from({ length: rows }, (_, i) => Array.from(a.subarray(i * cols, (i + 1) * cols))));
    const x = Float64Array.from([1, -2, 0.5]);
    const y = Float64Array.from([0.3, 1, -1, 2]);
    expect(maxDiff(matVec(a, rows, cols, x, new Float64Array(rows)), m.mmul(Matrix.columnVector(Array.from(x))).to1DArray())).toBeLessThan(1e-14);
    expect(maxDiff(matTVec(a, rows, cols, y, new Float64Array(cols)), m.transpose().mmul(Matrix.columnVector(Array.from(y))).to1DArray())).toBeLessThan(1e-14);
  });
});

function sliceLeading(a: Float64Array, n: number, k: number): Float64Array {
  const out = new Float64Array(k * k);
  for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) out[i * k + j] = a[i * n + j];
  return out;
}
