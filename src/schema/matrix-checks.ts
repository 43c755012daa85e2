import { choleskyDecompose } from '../linalg/dense.js';
import { symmetricEigenDecomposition } from '../linalg/eigen.js';
import { TOLERANCES } from './limits.js';
import { problem, type PathPart, type Problem } from './problems.js';

/**
 * Checks of a caller's matrix: shape, symmetry, positive semi-definiteness (with the project's
 * own linear-algebra kernels).
 */

/** Rows of length `cols`; returns false (with problems) if any row is off. */
export function checkShape(m: readonly (readonly number[])[], rows: number, cols: number, path: PathPart[], what: string, out: Problem[]): boolean {
  let ok = true;
  if (m.length !== rows) {
    out.push(problem(path, `${what}: expected ${rows} rows, got ${m.length}`));
    ok = false;
  }
  m.forEach((row, i) => {
    if (row.length !== cols) {
      out.push(problem([...path, i], `expected ${cols} numbers (${what} has ${cols} columns), got ${row.length}`));
      ok = false;
    }
  });
  return ok;
}

/** Symmetric to within TOLERANCES.symmetry × the largest diagonal entry. */
export function checkSymmetric(m: readonly (readonly number[])[], path: PathPart[], out: Problem[]): boolean {
  const n = m.length;
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(m[i][i]));
  const tol = TOLERANCES.symmetry * Math.max(scale, Number.MIN_VALUE);
  let ok = true;
  for (let i = 0; i < n && ok; i++) {
    if (m[i][i] < 0) {
      out.push(problem([...path, i, i], `a variance must be ≥ 0, got ${m[i][i]}`));
      ok = false;
    }
    for (let j = i + 1; j < n; j++) {
      if (Math.abs(m[i][j] - m[j][i]) > tol) {
        out.push(problem([...path, i, j], `matrix must be symmetric: [${i}][${j}] = ${m[i][j]} but [${j}][${i}] = ${m[j][i]} (tolerance ${tol.toExponential(2)})`));
        ok = false;
        break;
      }
    }
  }
  return ok;
}

export interface PsdCheck {
  readonly psd: boolean;
  /** Smallest eigenvalue (only computed when the fast Cholesky test fails). */
  readonly smallestEigenvalue?: number;
}

/** PSD to within TOLERANCES.psd relative to the largest eigenvalue. Cholesky first; eigenvalues only when that fails. */
export function checkPsd(m: readonly (readonly number[])[]): PsdCheck {
  const n = m.length;
  const a = new Float64Array(n * n);
  m.forEach((row, i) => a.set(row, i * n));
  if (choleskyDecompose(Float64Array.from(a), n) < 0) return { psd: true };
  const values = symmetricEigenDecomposition(a, n).values;
  const smallest = values[n - 1];
  const largest = values[0];
  return { psd: smallest >= -TOLERANCES.psd * Math.max(1, Math.abs(largest)), smallestEigenvalue: smallest };
}
