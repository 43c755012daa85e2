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

/**
 * out[i·n + j] ← scale · ⟨column i, column j⟩ for n columns of length m; exactly symmetric.
 * Four columns j..j+3 share each load of column i (register blocking): about twice as fast as
 * one dot product at a time on V8, with the same summation order per entry.
 */
export function columnCrossProducts(columns: Float64Array, n: number, m: number, scale: number, out: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const a = i * m;
    let j = i;
    for (; j + 3 < n; j += 4) {
      const b0 = j * m;
      const b1 = b0 + m;
      const b2 = b1 + m;
      const b3 = b2 + m;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      for (let p = 0; p < m; p++) {
        const x = columns[a + p];
        s0 += x * columns[b0 + p];
        s1 += x * columns[b1 + p];
        s2 += x * columns[b2 + p];
        s3 += x * columns[b3 + p];
      }
      setSymmetric(out, n, i, j, scale * s0);
      setSymmetric(out, n, i, j + 1, scale * s1);
      setSymmetric(out, n, i, j + 2, scale * s2);
      setSymmetric(out, n, i, j + 3, scale * s3);
    }
    for (; j < n; j++) setSymmetric(out, n, i, j, scale * columnDot(columns, a, columns, j * m, m));
  }
  return out;
}

function setSymmetric(out: Float64Array, n: number, i: number, j: number, value: number): void {
  out[i * n + j] = value;
  out[j * n + i] = value;
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
