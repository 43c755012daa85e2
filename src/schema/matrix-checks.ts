import { choleskyDecompose } from '../linalg/dense.js';
import { symmetricEigenDecomposition } from '../linalg/eigen.js';
import { TOLERANCES } from './limits.js';
import { EXACT_EIGENVALUE_MAX_N, POWER_ITERATIONS } from '../cost/work-model.js';
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
  /** Σ itself has a Cholesky factor (positive definite); false for a singular or indefinite matrix. */
  readonly positiveDefinite: boolean;
  /** δ: the matrix counts as PSD when Σ + δI is positive definite (δ = TOLERANCES.psd·max(1, λ₁ estimate)). */
  readonly threshold: number;
  /** Exact smallest eigenvalue: only for a matrix that is not PSD and has at most EXACT_EIGENVALUE_MAX_N rows. */
  readonly smallestEigenvalue?: number;
}

/**
 * PSD to within TOLERANCES.psd relative to the largest eigenvalue λ₁, by factorisation only:
 * λ_min(Σ) > −δ exactly when Σ + δI is positive definite, which a Cholesky factorisation decides
 * in N³/3 operations (an eigendecomposition costs ~12·N³ and several N×N copies). λ₁ is estimated
 * from below by power iteration (Golub & Van Loan §8.2.1), so δ never exceeds the stated
 * tolerance. Cholesky of Σ itself first (the usual case). For a failing matrix of at most
 * EXACT_EIGENVALUE_MAX_N rows the exact smallest eigenvalue is computed for the message. The
 * work model (src/cost/work-model.ts, validationUnits) counts all of this.
 */
export function checkPsd(m: readonly (readonly number[])[]): PsdCheck {
  const n = m.length;
  const a = new Float64Array(n * n);
  m.forEach((row, i) => a.set(row, i * n));
  const scratch = new Float64Array(n * n);
  scratch.set(a);
  const largest = largestEigenvalueEstimate(a, n);
  const threshold = TOLERANCES.psd * Math.max(1, Math.abs(largest));
  if (choleskyDecompose(scratch, n) < 0) return { psd: true, positiveDefinite: true, threshold };
  scratch.set(a);
  for (let i = 0; i < n; i++) scratch[i * n + i] += threshold;
  if (choleskyDecompose(scratch, n) < 0) return { psd: true, positiveDefinite: false, threshold };
  if (n > EXACT_EIGENVALUE_MAX_N) return { psd: false, positiveDefinite: false, threshold };
  const values = symmetricEigenDecomposition(a, n).values;
  return { psd: false, positiveDefinite: false, threshold, smallestEigenvalue: values[n - 1] };
}

/** A lower estimate of the largest eigenvalue of a symmetric matrix: POWER_ITERATIONS steps from the all-ones vector. */
function largestEigenvalueEstimate(a: Float64Array, n: number): number {
  let v = new Float64Array(n).fill(1 / Math.sqrt(n));
  let w = new Float64Array(n);
  let estimate = 0;
  for (let i = 0; i < n; i++) estimate = Math.max(estimate, a[i * n + i]);
  for (let step = 0; step < POWER_ITERATIONS; step++) {
    let norm = 0;
    let rayleigh = 0;
    for (let i = 0; i < n; i++) {
      let s = 0;
      const row = i * n;
      for (let j = 0; j < n; j++) s += a[row + j] * v[j];
      w[i] = s;
      rayleigh += v[i] * s;
      norm += s * s;
    }
    // The Rayleigh quotient of a unit vector never exceeds λ₁.
    estimate = Math.max(estimate, rayleigh);
    norm = Math.sqrt(norm);
    if (!(norm > 0)) break;
    for (let i = 0; i < n; i++) w[i] /= norm;
    [v, w] = [w, v];
  }
  return estimate;
}
