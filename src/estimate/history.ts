import { EstimationError } from './errors.js';

/**
 * A return history: T periods × N series (assets or factors) of simple per-period returns,
 * row-major, so row t holds every series' return in period t.
 */
export interface ReturnHistory {
  readonly values: Float64Array; // periods*series
  readonly periods: number; // T
  readonly series: number; // N
}

/** Wrap row-major values as a history, checking shape and that every value is finite. */
export function createReturnHistory(values: Float64Array, periods: number, series: number): ReturnHistory {
  if (!Number.isInteger(periods) || !Number.isInteger(series) || periods < 1 || series < 1) {
    throw new EstimationError('invalid-input', `history shape must be positive integers, got ${periods}×${series}`);
  }
  if (values.length !== periods * series) {
    throw new EstimationError('invalid-input', `history has ${values.length} values, expected ${periods}×${series}`);
  }
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) {
      const t = Math.floor(i / series);
      throw new EstimationError('invalid-input', `history value at row ${t}, column ${i - t * series} is not finite`);
    }
  }
  return { values, periods, series };
}

/** Build a history from nested arrays (the JSON shape of a proposal): rows[t][j]. */
export function returnHistoryFromRows(rows: readonly (readonly number[])[]): ReturnHistory {
  const periods = rows.length;
  const series = periods > 0 ? rows[0].length : 0;
  const values = new Float64Array(periods * series);
  for (let t = 0; t < periods; t++) {
    const row = rows[t];
    if (row.length !== series) {
      throw new EstimationError('invalid-input', `row ${t} has ${row.length} values, expected ${series}`);
    }
    values.set(row, t * series);
  }
  return createReturnHistory(values, periods, series);
}

/**
 * How many rows an estimate uses: all T rows, or the selected ones. A selection lists row indices
 * of the original history (a bootstrap draw, repeats allowed, any length), so draws need no copy
 * of the data. Every index is checked: an out-of-range index would otherwise read `undefined`
 * and turn the estimate into NaN silently.
 */
export function selectedRowCount(history: ReturnHistory, rows: Int32Array | undefined): number {
  if (rows === undefined) return history.periods;
  const limit = history.periods;
  for (let p = 0; p < rows.length; p++) {
    const r = rows[p];
    if (r < 0 || r >= limit) {
      throw new EstimationError('invalid-input', `row selection index ${r} at position ${p} is outside 0..${limit - 1}`);
    }
  }
  return rows.length;
}

/** Fail unless at least `needed` rows are in use. */
export function requireRows(count: number, needed: number, what: string): void {
  if (count < needed) {
    throw new EstimationError('too-few-rows', `${what} needs at least ${needed} rows, got ${count}`);
  }
}
