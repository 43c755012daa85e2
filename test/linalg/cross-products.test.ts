import { Matrix } from 'ml-matrix';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { symmetricCrossProducts } from '../../src/linalg/cross-products.js';

describe('symmetricCrossProducts', () => {
  it('Σ_s b_s r_s r_sᵀ from column-major inputs equals Rᵀ·diag(b)·R by ml-matrix, for odd and even sizes', () => {
    // Reference: the matrix product in ml-matrix (general-purpose linear algebra library).
    for (const n of [1, 2, 3, 4, 5, 7, 8, 9]) {
      const m = 13;
      const random = seedrandom(`kernel-${n}`);
      const rows = Matrix.zeros(m, n);
      const b = Array.from({ length: m }, () => random());
      for (let s = 0; s < m; s++) for (let i = 0; i < n; i++) rows.set(s, i, random() - 0.5);
      const columns = new Float64Array(n * m);
      const weighted = new Float64Array(n * m);
      for (let i = 0; i < n; i++) {
        for (let s = 0; s < m; s++) {
          columns[i * m + s] = rows.get(s, i);
          weighted[i * m + s] = b[s] * rows.get(s, i);
        }
      }
      const out = new Float64Array(n * n).fill(Number.NaN);
      symmetricCrossProducts(weighted, columns, n, m, 1, out);
      const expected = rows.transpose().mmul(Matrix.diag(b).mmul(rows));
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          expect(Math.abs(out[i * n + j] - expected.get(i, j))).toBeLessThan(1e-14);
          expect(out[i * n + j]).toBe(out[j * n + i]);
        }
      }
    }
  });
});

describe('symmetricCrossProducts as a Gram matrix', () => {
  it('left = right gives scale · XᵀX, exactly symmetric, as ml-matrix computes it', () => {
    const n = 6;
    const m = 11;
    const random = seedrandom('gram');
    const rows = Matrix.zeros(m, n);
    for (let s = 0; s < m; s++) for (let i = 0; i < n; i++) rows.set(s, i, random() - 0.5);
    const columns = new Float64Array(n * m);
    for (let i = 0; i < n; i++) for (let s = 0; s < m; s++) columns[i * m + s] = rows.get(s, i);
    const out = symmetricCrossProducts(columns, columns, n, m, 0.1, new Float64Array(n * n));
    const expected = rows.transpose().mmul(rows);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) expect(out[i * n + j]).toBeCloseTo(0.1 * expected.get(i, j), 14);
  });
});
