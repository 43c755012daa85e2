import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { psdSquareRoot, symmetricEigenDecomposition } from '../../src/linalg/eigen.js';

function maxDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

function randomSymmetric(seed: string, n: number): Float64Array {
  const rng = seedrandom(seed);
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      a[i * n + j] = rng() - 0.5;
      a[j * n + i] = a[i * n + j];
    }
  }
  return a;
}

describe('symmetricEigenDecomposition', () => {
  it('2×2 closed form: λ = (a+c)/2 ± √(((a−c)/2)² + b²)', () => {
    // Closed form of the 2×2 symmetric eigenproblem (characteristic polynomial; any linear algebra text).
    const [a, b, c] = [2, 0.7, -1];
    const { values, vectors } = symmetricEigenDecomposition(Float64Array.from([a, b, b, c]), 2);
    const mid = (a + c) / 2;
    const rad = Math.sqrt(((a - c) / 2) ** 2 + b * b);
    expect(values[0]).toBeCloseTo(mid + rad, 14);
    expect(values[1]).toBeCloseTo(mid - rad, 14);
    // A v = λ v for the first column.
    const v0 = [vectors[0], vectors[2]];
    expect(a * v0[0] + b * v0[1]).toBeCloseTo(values[0] * v0[0], 13);
  });

  it('constant-correlation matrix: eigenvalues 1 + (n−1)ρ once and 1 − ρ (n−1 times)', () => {
    // Standard result for the equicorrelation matrix (e.g. Morrison, Multivariate Statistical Methods).
    const n = 6;
    const rho = 0.35;
    const a = Float64Array.from({ length: n * n }, (_, k) => (Math.floor(k / n) === k % n ? 1 : rho));
    const { values, vectors } = symmetricEigenDecomposition(a, n);
    expect(values[0]).toBeCloseTo(1 + (n - 1) * rho, 13);
    for (let i = 1; i < n; i++) expect(values[i]).toBeCloseTo(1 - rho, 13);
    // The top eigenvector is 1/√n (sign fixed positive).
    for (let i = 0; i < n; i++) expect(vectors[i * n]).toBeCloseTo(1 / Math.sqrt(n), 12);
  });

  it('reconstructs random symmetric matrices, sorted descending, orthonormal vectors', () => {
    const rng = seedrandom('eig');
    const n = 9;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) a[i * n + j] = a[j * n + i] = rng() - 0.5;
    const { values, vectors } = symmetricEigenDecomposition(a, n);
    for (let i = 1; i < n; i++) expect(values[i]).toBeLessThanOrEqual(values[i - 1]);
    const rebuilt = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        let s = 0;
        let dotIJ = 0;
        for (let k = 0; k < n; k++) {
          s += vectors[i * n + k] * values[k] * vectors[j * n + k];
          dotIJ += vectors[k * n + i] * vectors[k * n + j];
        }
        rebuilt[i * n + j] = s;
        expect(dotIJ).toBeCloseTo(i === j ? 1 : 0, 12);
      }
    }
    expect(maxDiff(rebuilt, a)).toBeLessThan(1e-13);
  });

  it('solves [[2, 1], [1, 2]]: eigenvalues 3 and 1, eigenvectors (1, 1)/√2 and (1, −1)/√2', () => {
    // 2×2 closed form λ = (a+c)/2 ± √(((a−c)/2)² + b²) with a = c = 2, b = 1.
    const { values, vectors } = symmetricEigenDecomposition(Float64Array.from([2, 1, 1, 2]), 2);
    expect(values[0]).toBeCloseTo(3, 15);
    expect(values[1]).toBeCloseTo(1, 15);
    expect(vectors[0]).toBeCloseTo(Math.SQRT1_2, 15); // column 0
    expect(vectors[2]).toBeCloseTo(Math.SQRT1_2, 15);
    // Column 1: entries tie in magnitude, so the first one is made positive (the sign rule).
    expect(vectors[1]).toBeCloseTo(Math.SQRT1_2, 15);
    expect(vectors[3]).toBeCloseTo(-Math.SQRT1_2, 15);
  });

  it('satisfies AV = VΛ and VᵀV = I with eigenvalues descending and the sign rule applied', () => {
    // Defining property of the eigen-decomposition; the sign rule (largest-magnitude entry
    // positive) is what the PCA factor model's fixtures rely on.
    for (const n of [3, 7, 12]) {
      const a = randomSymmetric(`eig${n}`, n);
      const { values, vectors } = symmetricEigenDecomposition(a, n);
      for (let k = 1; k < n; k++) expect(values[k]).toBeLessThanOrEqual(values[k - 1]);
      for (let k = 0; k < n; k++) {
        let pivot = 0;
        for (let i = 1; i < n; i++) if (Math.abs(vectors[i * n + k]) > Math.abs(vectors[pivot * n + k])) pivot = i;
        expect(vectors[pivot * n + k]).toBeGreaterThan(0);
        for (let i = 0; i < n; i++) {
          let av = 0;
          for (let j = 0; j < n; j++) av += a[i * n + j] * vectors[j * n + k];
          expect(Math.abs(av - values[k] * vectors[i * n + k])).toBeLessThan(1e-13);
        }
        for (let l = 0; l < n; l++) {
          let dot = 0;
          for (let i = 0; i < n; i++) dot += vectors[i * n + k] * vectors[i * n + l];
          expect(Math.abs(dot - (k === l ? 1 : 0))).toBeLessThan(1e-13);
        }
      }
    }
  });

  it('uses the symmetric part of a slightly asymmetric input, bit-identical to the symmetrised matrix', () => {
    // ½(A + Aᵀ) is the matrix whose eigen-decomposition is meant (definition of the symmetric part).
    const n = 5;
    const symmetric = randomSymmetric('asym', n);
    const skewed = Float64Array.from(symmetric);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) {
      skewed[i * n + j] += 1e-12;
      skewed[j * n + i] -= 1e-12;
    }
    const halfSum = Float64Array.from({ length: n * n }, (_, k) => 0.5 * (skewed[k] + skewed[(k % n) * n + Math.floor(k / n)]));
    const fromSkewed = symmetricEigenDecomposition(skewed, n);
    const fromHalfSum = symmetricEigenDecomposition(halfSum, n);
    expect(Array.from(fromSkewed.values)).toEqual(Array.from(fromHalfSum.values));
    expect(Array.from(fromSkewed.vectors)).toEqual(Array.from(fromHalfSum.vectors));
  });

  it('psdSquareRoot gives R Rᵀ = A for a singular PSD matrix and rejects an indefinite one', () => {
    const v = [1, 2, -1];
    const a = Float64Array.from({ length: 9 }, (_, k) => v[Math.floor(k / 3)] * v[k % 3]); // rank one
    const r = psdSquareRoot(a, 3);
    const rrt = new Float64Array(9);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) rrt[i * 3 + j] += r[i * 3 + k] * r[j * 3 + k];
    expect(maxDiff(rrt, a)).toBeLessThan(1e-13);
    expect(() => psdSquareRoot(Float64Array.from([1, 2, 2, 1]), 2)).toThrow(RangeError);
  });
});
