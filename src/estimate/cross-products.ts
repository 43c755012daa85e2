import { symmetricCrossProducts } from '../linalg/cross-products.js';
import type { ReturnHistory } from './history.js';
import { accumulateMean } from './means.js';

/**
 * Kernels shared by the covariance and factor estimators. The selected rows are copied once,
 * centred, into column-major scratch (series j at [j·m, (j+1)·m)) so every cross product is a
 * contiguous dot product; the O(m·N²) products then dominate and run cache-friendly.
 */

/**
 * columns[j·m + p] ← rowScale[p] · (x_{r_p, j} − centre[j]) for the m selected rows.
 * `centre` may be omitted (no centring, e.g. RiskMetrics' zero-mean convention) and
 * `rowScale` too (all ones); EWMA passes √w_p so that products carry the weights.
 */
export function gatherCentredColumns(
  history: ReturnHistory,
  rows: Int32Array | undefined,
  m: number,
  centre: Float64Array | undefined,
  rowScale: Float64Array | undefined,
  columns: Float64Array,
): Float64Array {
  const n = history.series;
  const x = history.values;
  for (let p = 0; p < m; p++) {
    const offset = (rows === undefined ? p : rows[p]) * n;
    const scale = rowScale === undefined ? 1 : rowScale[p];
    for (let j = 0; j < n; j++) {
      const c = centre === undefined ? 0 : centre[j];
      columns[j * m + p] = scale * (x[offset + j] - c);
    }
  }
  return columns;
}

/** Σ_p a[aStart + p] · b[bStart + p] over m entries. */
export function columnDot(a: Float64Array, aStart: number, b: Float64Array, bStart: number, m: number): number {
  let s = 0;
  for (let p = 0; p < m; p++) s += a[aStart + p] * b[bStart + p];
  return s;
}

/** out[i·n + j] ← scale · ⟨column i, column j⟩ for n columns of length m; exactly symmetric (a Gram matrix). */
export function columnCrossProducts(columns: Float64Array, n: number, m: number, scale: number, out: Float64Array): Float64Array {
  return symmetricCrossProducts(columns, columns, n, m, scale, out);
}

/**
 * Demeaned columns of the selected rows: `mean` (length ≥ N) receives the sample mean of those
 * rows and `columns` (length ≥ N·m) the rows minus that mean, column-major with stride m.
 */
export function demeanedColumns(
  history: ReturnHistory,
  rows: Int32Array | undefined,
  m: number,
  mean: Float64Array,
  columns: Float64Array,
): Float64Array {
  accumulateMean(history, rows, m, mean);
  return gatherCentredColumns(history, rows, m, mean, undefined, columns);
}
