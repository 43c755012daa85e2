import { selectedRowCount, requireRows, type ReturnHistory } from './history.js';
import { outputOrNew } from './workspace.js';

export interface MeanOptions {
  /** Row indices of the history to use (a bootstrap draw); all rows when absent. */
  readonly rows?: Int32Array;
  /** Length-N buffer for the result. */
  readonly out?: Float64Array;
}

/** Sample mean of each series, x̄_j = (1/m) Σ_p x_{r_p, j}, over all rows or the selected ones. */
export function sampleMean(history: ReturnHistory, options: MeanOptions = {}): Float64Array {
  const n = history.series;
  const m = selectedRowCount(history, options.rows);
  requireRows(m, 1, 'a mean');
  const out = outputOrNew(options.out, n, 'mean');
  accumulateMean(history, options.rows, m, out);
  return out;
}

/** out ← mean of the m selected rows; no checks (callers validated the selection). */
export function accumulateMean(history: ReturnHistory, rows: Int32Array | undefined, m: number, out: Float64Array): void {
  const n = history.series;
  const x = history.values;
  out.fill(0, 0, n);
  for (let p = 0; p < m; p++) {
    const offset = (rows === undefined ? p : rows[p]) * n;
    for (let j = 0; j < n; j++) out[j] += x[offset + j];
  }
  for (let j = 0; j < n; j++) out[j] /= m;
}
