/**
 * Scenario rows for scenario-based methods (Kelly). A channel fixes the mean of its rows while
 * keeping their co-movement: rows are shifted by (target mean − their own mean), so the mean-only
 * channel uses the base rows moved to the draw's mean, and the covariance-only channel the draw's
 * rows moved back to the base mean (common random numbers across channels).
 */

/** out[s, j] ← source[rows[s], j] + shift[j] (rows absent: all rows in order). */
export function shiftedRows(
  source: Float64Array,
  n: number,
  count: number,
  rows: Int32Array | undefined,
  shift: Float64Array | undefined,
  out: Float64Array,
): Float64Array {
  for (let s = 0; s < count; s++) {
    const from = (rows ? rows[s] : s) * n;
    const to = s * n;
    if (shift) for (let j = 0; j < n; j++) out[to + j] = source[from + j] + shift[j];
    else for (let j = 0; j < n; j++) out[to + j] = source[from + j];
  }
  return out;
}

/** out ← a − b. */
export function difference(a: Float64Array, b: Float64Array, out: Float64Array): Float64Array {
  for (let i = 0; i < out.length; i++) out[i] = a[i] - b[i];
  return out;
}

/**
 * Expected shortfall at level α of the portfolio over the scenario rows, as a positive per-period
 * loss: minus the mean of the worst ⌈(1−α)·S⌉ portfolio returns (the usual historical-simulation
 * estimator; Acerbi & Tasche 2002 give the exact fractional form, which differs by less than one
 * scenario's weight). `scratch` needs S entries.
 */
export function expectedShortfall(
  source: Float64Array,
  n: number,
  count: number,
  rows: Int32Array | undefined,
  weights: Float64Array,
  level: number,
  scratch: Float64Array,
): number {
  const returns = scratch.subarray(0, count);
  for (let s = 0; s < count; s++) {
    const from = (rows ? rows[s] : s) * n;
    let r = 0;
    for (let j = 0; j < n; j++) r += source[from + j] * weights[j];
    returns[s] = r;
  }
  returns.sort();
  const tail = Math.max(1, Math.ceil((1 - level) * count));
  let sum = 0;
  for (let s = 0; s < tail; s++) sum += returns[s];
  return -sum / tail;
}
