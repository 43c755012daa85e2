import { Matrix, solve } from 'ml-matrix';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { FactorSubsetSolver, factorSquareRoot, solveFactorSubset } from '../../src/linalg/factor-solve.js';

// Woodbury (Sherman–Morrison–Woodbury identity) against a dense solve of the same N×N system by
// ml-matrix (LU), on index subsets.

interface FactorCase {
  n: number;
  k: number;
  b: Float64Array;
  f: Float64Array;
  d: Float64Array;
}

function randomCase(n: number, k: number, seed: string, singularF = false): FactorCase {
  const rng = seedrandom(seed);
  const b = Float64Array.from({ length: n * k }, () => rng() * 2 - 0.5);
  const g = Float64Array.from({ length: k * k }, () => rng() - 0.5);
  const f = new Float64Array(k * k);
  const rank = singularF ? k - 1 : k;
  for (let a = 0; a < k; a++) for (let c = 0; c < k; c++) for (let m = 0; m < rank; m++) f[a * k + c] += g[a * k + m] * g[c * k + m];
  const d = Float64Array.from({ length: n }, () => 0.01 + 0.05 * rng());
  return { n, k, b, f, d };
}

/** Dense M = c·BFBᵀ + diag(d) restricted to `subset`, solved by ml-matrix. */
function denseSubsetSolve(fc: FactorCase, c: number, subset: number[], rhs: Float64Array): number[] {
  const { k, b, f, d } = fc;
  const m = subset.map((i) =>
    subset.map((j) => {
      let s = 0;
      for (let a = 0; a < k; a++) for (let e = 0; e < k; e++) s += b[i * k + a] * f[a * k + e] * b[j * k + e];
      return c * s + (i === j ? d[i] : 0);
    }),
  );
  return solve(new Matrix(m), Matrix.columnVector(subset.map((i) => rhs[i]))).to1DArray();
}

describe('Woodbury subset solves', () => {
  it('agree with a dense solve on random subsets (F positive definite and singular)', () => {
    for (const [n, k, singular] of [
      [12, 3, false],
      [40, 5, false],
      [25, 4, true],
    ] as const) {
      const fc = randomCase(n, k, `w-${n}-${k}`, singular);
      const rng = seedrandom(`subset-${n}`);
      const subset = Array.from({ length: n }, (_, i) => i).filter(() => rng() < 0.6);
      const rhs = Float64Array.from({ length: n }, () => rng() - 0.5);
      const ours = solveFactorSubset(fc.b, fc.f, k, 3.5, fc.d, Int32Array.from(subset), rhs);
      const ref = denseSubsetSolve(fc, 3.5, subset, rhs);
      let err = 0;
      let scale = 0;
      subset.forEach((i, r) => {
        err = Math.max(err, Math.abs(ours[i] - ref[r]));
        scale = Math.max(scale, Math.abs(ref[r]));
      });
      expect(err / scale).toBeLessThan(1e-11);
      // Entries outside the subset are zero.
      for (let i = 0; i < n; i++) if (!subset.includes(i)) expect(ours[i]).toBe(0);
    }
  });

  it('incremental add/remove matches a fresh subset', () => {
    const n = 30;
    const k = 4;
    const fc = randomCase(n, k, 'incremental');
    const solver = new FactorSubsetSolver(n, k);
    solver.setFactorModel(fc.b, fc.f, k, 2, fc.d);
    const list = Int32Array.from([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    let count = 10;
    solver.setSubset(list, count);
    // Remove index 4 (shift the list), then add 20 and 25.
    const members = [0, 1, 2, 3, 5, 6, 7, 8, 9];
    const shifted = new Int32Array(n);
    members.forEach((v, p) => (shifted[p] = v));
    count = members.length;
    solver.remove(4, shifted, count);
    for (const add of [20, 25]) {
      shifted[count++] = add;
      solver.add(add, shifted, count);
      members.push(add);
    }
    const rhs = Float64Array.from({ length: n }, (_, i) => Math.sin(i));
    const out = new Float64Array(n);
    solver.solve(rhs, out, shifted, count);
    const fresh = solveFactorSubset(fc.b, fc.f, k, 2, fc.d, Int32Array.from(members), rhs);
    for (const i of members) expect(out[i]).toBeCloseTo(fresh[i], 12);
  });

  it('factorSquareRoot gives R Rᵀ = c·F', () => {
    const fc = randomCase(3, 3, 'root', true);
    const r = factorSquareRoot(fc.f, 3, 2.5);
    for (let a = 0; a < 3; a++) {
      for (let c = 0; c < 3; c++) {
        let s = 0;
        for (let m = 0; m < 3; m++) s += r[a * 3 + m] * r[c * 3 + m];
        expect(s).toBeCloseTo(2.5 * fc.f[a * 3 + c], 13);
      }
    }
  });

  it('rejects a non-positive diagonal', () => {
    const fc = randomCase(4, 2, 'bad');
    fc.d[2] = 0;
    expect(() => solveFactorSubset(fc.b, fc.f, 2, 1, fc.d, Int32Array.from([0, 1]), new Float64Array(4))).toThrow(RangeError);
  });
});
