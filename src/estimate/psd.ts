import { symmetricEigenDecomposition } from '../linalg/eigen.js';

/**
 * Checks and repair for covariance matrices that must be symmetric positive semidefinite.
 */

/** Default relative symmetry tolerance: max|a_ij − a_ji| ≤ 1e-10 · max|a_kl|. */
export const SYMMETRY_TOLERANCE = 1e-10;

/** Largest asymmetry relative to the largest entry: max|a_ij − a_ji| / max|a_kl| (0 for a zero matrix). */
export function relativeAsymmetry(a: Float64Array, n: number): number {
  let largest = 0;
  let gap = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      largest = Math.max(largest, Math.abs(a[i * n + j]));
      if (j > i) gap = Math.max(gap, Math.abs(a[i * n + j] - a[j * n + i]));
    }
  }
  return largest > 0 ? gap / largest : 0;
}

/** True when the asymmetry is within `tolerance` relative to the largest entry (default 1e-10). */
export function isSymmetric(a: Float64Array, n: number, tolerance = SYMMETRY_TOLERANCE): boolean {
  return relativeAsymmetry(a, n) <= tolerance;
}

/** Smallest eigenvalue of the symmetric part (A + Aᵀ)/2 (the decomposition symmetrises its input). */
export function smallestEigenvalue(a: Float64Array, n: number): number {
  const { values } = symmetricEigenDecomposition(a, n);
  return values[n - 1];
}

export interface PsdRepair {
  /** The repaired matrix (a fresh buffer; equal to the symmetric part when nothing was clipped). */
  readonly matrix: Float64Array;
  /** Smallest eigenvalue of the input's symmetric part, before repair. */
  readonly minEigenvalue: number;
  /** How many eigenvalues were raised to the floor. */
  readonly clipped: number;
  /** ‖repaired − (A + Aᵀ)/2‖_F. */
  readonly frobeniusDistance: number;
}

/**
 * Nearest symmetric matrix with every eigenvalue ≥ `floor`, in the Frobenius norm: with
 * (A + Aᵀ)/2 = V diag(λ) Vᵀ it is V diag(max(λ, floor)) Vᵀ. For floor = 0 this is Higham's
 * nearest symmetric positive semidefinite matrix (Higham 1988, "Computing a nearest symmetric
 * positive semidefinite matrix", Linear Algebra Appl. 103; the symmetric case), at distance
 * (Σ_{λ_i<0} λ_i²)^½ from a symmetric A; a positive floor keeps the result invertible.
 * The diagonal (the variances) may change; it is not re-imposed, because that would leave the
 * nearest-matrix property (a correlation-matrix repair is a different problem).
 */
export function nearestPsd(a: Float64Array, n: number, floor = 0): PsdRepair {
  if (!(floor >= 0) || !Number.isFinite(floor)) throw new RangeError(`PSD floor must be finite and ≥ 0, got ${floor}`);
  const symmetric = symmetricPart(a, n);
  const { values, vectors } = symmetricEigenDecomposition(symmetric, n);
  const minEigenvalue = values[n - 1];
  let clipped = 0;
  for (let k = 0; k < n; k++) if (values[k] < floor) clipped++;
  if (clipped === 0) return { matrix: symmetric, minEigenvalue, clipped, frobeniusDistance: 0 };

  const repaired = new Float64Array(n * n);
  for (let k = 0; k < n; k++) {
    const lambda = Math.max(values[k], floor);
    for (let i = 0; i < n; i++) {
      const vik = lambda * vectors[i * n + k];
      for (let j = i; j < n; j++) repaired[i * n + j] += vik * vectors[j * n + k];
    }
  }
  let distanceSq = 0;
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      repaired[j * n + i] = repaired[i * n + j];
      const gap = repaired[i * n + j] - symmetric[i * n + j];
      distanceSq += i === j ? gap * gap : 2 * gap * gap;
    }
  }
  return { matrix: repaired, minEigenvalue, clipped, frobeniusDistance: Math.sqrt(distanceSq) };
}

function symmetricPart(a: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) out[i * n + j] = 0.5 * (a[i * n + j] + a[j * n + i]);
  }
  return out;
}
