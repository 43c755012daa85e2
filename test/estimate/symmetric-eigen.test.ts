import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { symmetricEigen } from '../../src/estimate/symmetric-eigen.js';

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

describe('symmetricEigen', () => {
  it('solves [[2, 1], [1, 2]]: eigenvalues 3 and 1, eigenvectors (1, 1)/√2 and (1, −1)/√2', () => {
    const { values, vectors } = symmetricEigen(Float64Array.from([2, 1, 1, 2]), 2);
    expect(values[0]).toBeCloseTo(3, 15);
    expect(values[1]).toBeCloseTo(1, 15);
    expect(vectors[0]).toBeCloseTo(Math.SQRT1_2, 15); // column 0
    expect(vectors[2]).toBeCloseTo(Math.SQRT1_2, 15);
    // Column 1: entries tie in magnitude, so the first one is made positive.
    expect(vectors[1]).toBeCloseTo(Math.SQRT1_2, 15);
    expect(vectors[3]).toBeCloseTo(-Math.SQRT1_2, 15);
  });

  it('satisfies AV = VΛ and VᵀV = I with eigenvalues descending and the sign rule applied', () => {
    for (const n of [3, 7, 12]) {
      const a = randomSymmetric(`eig${n}`, n);
      const { values, vectors } = symmetricEigen(a, n);
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
});
