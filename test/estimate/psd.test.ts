import fc from 'fast-check';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { isSymmetric, nearestPsd, relativeAsymmetry, smallestEigenvalue, SYMMETRY_TOLERANCE } from '../../src/estimate/psd.js';
import { symmetricEigenDecomposition } from '../../src/linalg/eigen.js';

function frobenius(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return Math.sqrt(s);
}

describe('symmetry check', () => {
  it('measures asymmetry relative to the largest entry against a 1e-10 default tolerance', () => {
    const a = Float64Array.from([4, 1, 1 + 2 ** -38, 2]); // exact in binary: gap 2⁻³⁸, largest entry 4
    expect(relativeAsymmetry(a, 2)).toBe(2 ** -40);
    expect(SYMMETRY_TOLERANCE).toBe(1e-10);
    expect(isSymmetric(a, 2)).toBe(true);
    expect(isSymmetric(Float64Array.from([4, 1, 1.001, 2]), 2)).toBe(false);
    expect(isSymmetric(a, 2, 1e-13)).toBe(false);
    expect(relativeAsymmetry(new Float64Array(4), 2)).toBe(0);
  });
});

describe('smallestEigenvalue', () => {
  it('reads the smallest eigenvalue of the symmetric part', () => {
    expect(smallestEigenvalue(Float64Array.from([3, 0, 0, 0, -2, 0, 0, 0, 5]), 3)).toBeCloseTo(-2, 15);
    // [[1, 2], [2, 1]] has eigenvalues 3 and −1.
    expect(smallestEigenvalue(Float64Array.from([1, 2, 2, 1]), 2)).toBeCloseTo(-1, 15);
    // Symmetric part of [[1, 3], [1, 1]] is [[1, 2], [2, 1]].
    expect(smallestEigenvalue(Float64Array.from([1, 3, 1, 1]), 2)).toBeCloseTo(-1, 15);
  });
});

describe('nearestPsd (eigenvalue clipping)', () => {
  it('repairs [[1, 2], [2, 1]] to 1.5·[[1, 1], [1, 1]] at distance 1', () => {
    // Eigenvalues 3 and −1 with vectors (1, ±1)/√2: clipping −1 leaves 3·vvᵀ = 1.5·11ᵀ;
    // Higham (1988), LAA 103: distance (Σ_{λ<0} λ²)^½ = 1.
    const repair = nearestPsd(Float64Array.from([1, 2, 2, 1]), 2);
    for (const v of repair.matrix) expect(v).toBeCloseTo(1.5, 15);
    expect(repair.minEigenvalue).toBeCloseTo(-1, 15);
    expect(repair.clipped).toBe(1);
    expect(repair.frobeniusDistance).toBeCloseTo(1, 15);
  });

  it("is at Higham's distance and no farther than other PSD matrices (Higham 1988, LAA 103)", () => {
    const rng = seedrandom('psd');
    fc.assert(
      fc.property(fc.integer({ min: 2, max: 8 }), fc.nat(), (n, salt) => {
        const a = new Float64Array(n * n);
        for (let i = 0; i < n; i++) {
          for (let j = i; j < n; j++) {
            a[i * n + j] = rng() - 0.5 + (salt % 3) * 0.01;
            a[j * n + i] = a[i * n + j];
          }
        }
        const repair = nearestPsd(a, n);
        const { values } = symmetricEigenDecomposition(a, n);
        let negativeSq = 0;
        for (const v of values) if (v < 0) negativeSq += v * v;
        expect(Math.abs(repair.frobeniusDistance - Math.sqrt(negativeSq))).toBeLessThan(1e-12);
        expect(Math.abs(frobenius(repair.matrix, a) - repair.frobeniusDistance)).toBeLessThan(1e-12);
        expect(smallestEigenvalue(repair.matrix, n)).toBeGreaterThan(-1e-13);
        expect(relativeAsymmetry(repair.matrix, n)).toBe(0);
        // Any other PSD matrix (here GGᵀ and a mix with the repair) is at least as far from A.
        for (let trial = 0; trial < 3; trial++) {
          const g = Float64Array.from({ length: n * n }, () => rng() - 0.5);
          const other = new Float64Array(n * n);
          for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) for (let k = 0; k < n; k++) other[i * n + j] += g[i * n + k] * g[j * n + k];
          const mixed = other.map((v, i) => 0.1 * v + 0.9 * repair.matrix[i]);
          expect(frobenius(other, a)).toBeGreaterThanOrEqual(repair.frobeniusDistance - 1e-12);
          expect(frobenius(mixed, a)).toBeGreaterThanOrEqual(repair.frobeniusDistance - 1e-12);
        }
      }),
      { numRuns: 60 },
    );
  });

  it('raises eigenvalues to a positive floor and leaves an acceptable matrix as it was', () => {
    const a = Float64Array.from([1, 0.9, 0.7, 0.9, 1, 0.95, 0.7, 0.95, 1]);
    const floored = nearestPsd(a, 3, 0.05);
    expect(smallestEigenvalue(floored.matrix, 3)).toBeCloseTo(0.05, 12);
    const untouched = nearestPsd(Float64Array.from([2, 0.5, 0.5, 1]), 2);
    expect(untouched.clipped).toBe(0);
    expect(untouched.frobeniusDistance).toBe(0);
    expect(Array.from(untouched.matrix)).toEqual([2, 0.5, 0.5, 1]);
    expect(() => nearestPsd(a, 3, -1)).toThrow(RangeError);
  });
});
