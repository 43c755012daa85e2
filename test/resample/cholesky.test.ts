import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { lowerCholesky } from '../../src/resample/cholesky.js';

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

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

/** A = G Gᵀ for a G from the Park–Miller LCG (REFERENCES.md generator): SPD when G has full rank. */
function gram(n: number, rank: number, seed: number): Float64Array {
  let s = seed;
  const g = new Float64Array(n * rank);
  for (let i = 0; i < g.length; i++) {
    s = (16807 * s) % 2147483647;
    g[i] = s / 2147483647 - 0.5;
  }
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    let v = 0;
    for (let k = 0; k < rank; k++) v += g[i * rank + k] * g[j * rank + k];
    a[i * n + j] = v;
  }
  return a;
}

describe('lowerCholesky', () => {
  it('matches ml-matrix on an SPD matrix (8×8) and reconstructs it', () => {
    const n = 8;
    const a = gram(n, 12, 99);
    const l = lowerCholesky(a, n);
    const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)));
    const reference = new CholeskyDecomposition(new Matrix(rows)).lowerTriangularMatrix.to1DArray();
    expect(maxAbsDiff(l, reference)).toBeLessThan(1e-13);
    expect(maxAbsDiff(reconstruct(l, n), a)).toBeLessThan(1e-14);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) expect(l[i * n + j]).toBe(0);
  });

  it('accepts a singular PSD matrix (rank 3 of 6) and still reconstructs it', () => {
    const n = 6;
    const a = gram(n, 3, 7);
    const l = lowerCholesky(a, n);
    expect(maxAbsDiff(reconstruct(l, n), a)).toBeLessThan(1e-12);
  });

  it('throws on a matrix that is not PSD', () => {
    expect(() => lowerCholesky(Float64Array.from([1, 2, 2, 1]), 2)).toThrow(RangeError);
  });
});
