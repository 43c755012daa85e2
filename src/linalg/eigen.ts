import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

/**
 * Symmetric eigen-decomposition A = V diag(λ) Vᵀ through ml-matrix (Householder
 * tridiagonalisation + implicit QL, the EISPACK tred2/tql2 route). O(n³) and allocating: meant for
 * base inputs (PCA factor models, PSD checks and repair), factor covariances (k×k) and tests,
 * never for inner loops. The one eigen wrapper of the code base: src/estimate uses it too.
 */
export interface SymmetricEigenDecomposition {
  readonly n: number;
  /** λ₁ ≥ λ₂ ≥ … ≥ λₙ. */
  readonly values: Float64Array;
  /** Row-major n×n; column a is the unit eigenvector for values[a]. */
  readonly vectors: Float64Array;
}

/**
 * Decomposes the symmetric n×n row-major matrix `a` (its symmetric part is used: ½(A + Aᵀ), so
 * rounding-level asymmetry in the caller's input cannot leak into complex eigenvalues).
 * Eigenvector signs are fixed so that the largest-magnitude entry (first on ties) is positive,
 * making the output deterministic; PCA loadings (estimate/factor-model.ts) and their reference
 * fixtures rely on this rule, so keep it. For exactly symmetric input the symmetrisation changes
 * nothing (½(x + x) = x in floating point).
 */
export function symmetricEigenDecomposition(a: Float64Array, n: number): SymmetricEigenDecomposition {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = new Array<number>(n);
    for (let j = 0; j < n; j++) row[j] = 0.5 * (a[i * n + j] + a[j * n + i]);
    rows.push(row);
  }
  const evd = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const raw = evd.realEigenvalues;
  const v = evd.eigenvectorMatrix;
  const order = raw.map((_, index) => index).sort((x, y) => raw[y] - raw[x] || x - y);
  const values = new Float64Array(n);
  const vectors = new Float64Array(n * n);
  for (let col = 0; col < n; col++) {
    const source = order[col];
    values[col] = raw[source];
    let pivot = 0;
    for (let i = 1; i < n; i++) if (Math.abs(v.get(i, source)) > Math.abs(v.get(pivot, source))) pivot = i;
    const sign = v.get(pivot, source) < 0 ? -1 : 1;
    for (let i = 0; i < n; i++) vectors[i * n + col] = sign * v.get(i, source);
  }
  return { n, values, vectors };
}

/**
 * A square root R (n×n, row-major) with R Rᵀ = A for a symmetric positive semi-definite A:
 * R = V diag(√max(λ, 0)). Negative eigenvalues above `−tolerance·λ₁` are treated as rounding and
 * clipped to 0; larger ones mean A is not PSD and throw a RangeError.
 */
export function psdSquareRoot(a: Float64Array, n: number, tolerance = 1e-10): Float64Array {
  const { values, vectors } = symmetricEigenDecomposition(a, n);
  const top = Math.max(values[0] ?? 0, 0);
  const out = new Float64Array(n * n);
  for (let col = 0; col < n; col++) {
    const lambda = values[col];
    if (lambda < -tolerance * Math.max(top, Number.MIN_VALUE)) {
      throw new RangeError(`matrix is not positive semi-definite: eigenvalue ${lambda}`);
    }
    const root = Math.sqrt(Math.max(lambda, 0));
    for (let i = 0; i < n; i++) out[i * n + col] = vectors[i * n + col] * root;
  }
  return out;
}
