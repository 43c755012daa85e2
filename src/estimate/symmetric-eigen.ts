import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

/** Eigen-decomposition A = V diag(λ) Vᵀ of a symmetric N×N matrix, eigenvalues descending. */
export interface SymmetricEigen {
  readonly n: number;
  /** λ_1 ≥ … ≥ λ_N. */
  readonly values: Float64Array;
  /** V, row-major N×N: column a is the unit eigenvector of values[a]. */
  readonly vectors: Float64Array;
}

/**
 * Symmetric eigen-decomposition through ml-matrix (Householder tridiagonalisation + QL, the
 * EISPACK tred2/tql2 route). O(N³) and allocating: for base inputs and checks, not inner loops.
 * Only the lower triangle's symmetric part matters; callers pass symmetric input.
 * Signs are made deterministic: each eigenvector's largest-magnitude entry (first on ties) is positive.
 */
export function symmetricEigen(a: Float64Array, n: number): SymmetricEigen {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(a.subarray(i * n, (i + 1) * n)));
  const decomposition = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const raw = decomposition.realEigenvalues;
  const v = decomposition.eigenvectorMatrix;
  const order = raw.map((_, index) => index).sort((x, y) => raw[y] - raw[x] || x - y);

  const values = new Float64Array(n);
  const vectors = new Float64Array(n * n);
  for (let a = 0; a < n; a++) {
    const source = order[a];
    values[a] = raw[source];
    let pivot = 0;
    for (let i = 1; i < n; i++) if (Math.abs(v.get(i, source)) > Math.abs(v.get(pivot, source))) pivot = i;
    const sign = v.get(pivot, source) < 0 ? -1 : 1;
    for (let i = 0; i < n; i++) vectors[i * n + a] = sign * v.get(i, source);
  }
  return { n, values, vectors };
}
