/**
 * Automatic block length for the stationary and circular block bootstraps
 * (Politis & White 2004, Econometric Reviews 23(1); corrected by Patton, Politis & White 2009,
 * Econometric Reviews 28(4)).
 *
 *   b_opt = (2Ĝ² / D)^{1/3} · n^{1/3},   Ĝ = Σ_{|k|≤M} h(k/M)|k| R̂(k),
 *   D_SB = 2ĝ²,  D_CB = (4/3)ĝ²,         ĝ = Σ_{|k|≤M} h(k/M) R̂(k)  (long-run variance),
 *   h(x) = min(1, 2(1 − |x|)) (flat-top window), R̂(k) autocovariance with divisor n,
 *
 * with M chosen from the correlogram: M = 2·m̂ where m̂ is the first lag that starts Kn consecutive
 * autocorrelations inside ±2√(log10(n)/n), Kn = max(5, ⌊log10 n⌋), M ≤ ⌈√n⌉ + Kn; the result is
 * capped at ⌈min(3√n, n/3)⌉. The tuning constants and the exact index conventions follow the
 * `arch` package's optimal_block_length (arch 8.0.0), whose values are the reference used in the
 * tests (reference/block-length.json); in particular its lag-i autocorrelation uses the sums of
 * squares over t ≥ i+1 and t ≤ n−i−2.
 */

export interface BlockLengths {
  /** Mean block length for the stationary bootstrap (Politis & Romano 1994). */
  readonly stationary: number;
  /** Block length for the circular block bootstrap. */
  readonly circular: number;
}

/**
 * Optimal block lengths of one series, as arch computes them (no lower clamp: a white-noise series
 * can give a value below 1). A constant series has no dependence to preserve and gets 1.
 * Series shorter than arch accepts (n ≤ 8, where its lag window passes the end of the data) are
 * handled by treating autocovariances beyond lag n − 1 as 0.
 */
export function optimalBlockLength(series: ArrayLike<number>): BlockLengths {
  const n = series.length;
  if (n < 2) throw new RangeError('optimalBlockLength needs at least 2 observations');
  const eps = new Float64Array(n);
  let mean = 0;
  for (let t = 0; t < n; t++) mean += series[t];
  mean /= n;
  let sumSquares = 0;
  for (let t = 0; t < n; t++) {
    eps[t] = series[t] - mean;
    sumSquares += eps[t] * eps[t];
  }
  if (sumSquares === 0) return { stationary: 1, circular: 1 };

  const bMax = Math.ceil(Math.min(3 * Math.sqrt(n), n / 3));
  const kn = Math.max(5, Math.trunc(Math.log10(n)));
  const mMax = Math.ceil(Math.sqrt(n)) + kn;
  const criticalValue = 2 * Math.sqrt(Math.log10(n) / n);

  const acv = new Float64Array(mMax + 1);
  const absAcorr = new Float64Array(mMax + 1);
  let firstQuietLag = -1;
  for (let i = 0; i <= mMax; i++) {
    let v1 = 0; // Σ_{t=i+1}^{n−1} ε_t²
    for (let t = i + 1; t < n; t++) v1 += eps[t] * eps[t];
    let v2 = 0; // Σ_{t=0}^{n−i−2} ε_t²
    for (let t = 0; t <= n - i - 2; t++) v2 += eps[t] * eps[t];
    let cross = 0; // Σ_{t=i}^{n−1} ε_t ε_{t−i}
    for (let t = i; t < n; t++) cross += eps[t] * eps[t - i];
    acv[i] = cross / n;
    absAcorr[i] = Math.abs(cross) / Math.sqrt(v1 * v2); // NaN when a sum is empty: never "quiet"
    if (i >= kn && firstQuietLag < 0 && allBelow(absAcorr, i - kn, i, criticalValue)) firstQuietLag = i - kn;
  }
  const m = Math.min(firstQuietLag >= 0 ? 2 * Math.max(firstQuietLag, 1) : mMax, mMax);

  let g = 0;
  let longRunVariance = acv[0];
  for (let k = 1; k <= m; k++) {
    const window = k / m <= 0.5 ? 1 : 2 * (1 - k / m);
    g += 2 * window * k * acv[k];
    longRunVariance += 2 * window * acv[k];
  }
  const dStationary = 2 * longRunVariance * longRunVariance;
  const dCircular = (4 / 3) * longRunVariance * longRunVariance;
  const nThird = Math.pow(n, 1 / 3);
  const stationary = Math.min(Math.pow((2 * g * g) / dStationary, 1 / 3) * nThird, bMax);
  const circular = Math.min(Math.pow((2 * g * g) / dCircular, 1 / 3) * nThird, bMax);
  return { stationary, circular };
}

function allBelow(values: Float64Array, from: number, to: number, bound: number): boolean {
  for (let i = from; i < to; i++) if (!(values[i] < bound)) return false;
  return true;
}

/**
 * How per-column block lengths become the one mean block length a multivariate resample needs
 * (rows are resampled jointly to keep cross-sectional dependence). Common practice:
 * 'mean' across assets (default) — the typical dependence; 'median' — robust to one very
 * persistent series; 'max' — conservative, preserves the most persistent series' dependence.
 */
export type BlockLengthRule = 'mean' | 'median' | 'max';

export interface HistoryBlockLength {
  /** The mean block length to use, clamped to [1, nRows]. */
  readonly meanBlockLength: number;
  /** Each column's stationary-bootstrap length as arch computes it (unclamped; 1 where undefined). */
  readonly perColumn: Float64Array;
  readonly rule: BlockLengthRule;
}

/**
 * One mean block length for a T×N history (row-major): the stationary-bootstrap length of every
 * column (optimalBlockLength), combined by `rule` and clamped to [1, T] — a stationary bootstrap
 * needs p = 1/b ≤ 1, and blocks longer than the data only repeat it.
 */
export function historyMeanBlockLength(
  returns: Float64Array,
  nRows: number,
  nCols: number,
  rule: BlockLengthRule = 'mean',
): HistoryBlockLength {
  if (nCols < 1) throw new RangeError('historyMeanBlockLength needs at least one column');
  if (returns.length < nRows * nCols) throw new RangeError(`returns holds ${returns.length} values, needs ${nRows * nCols}`);
  const column = new Float64Array(nRows);
  const perColumn = new Float64Array(nCols);
  for (let j = 0; j < nCols; j++) {
    for (let t = 0; t < nRows; t++) column[t] = returns[t * nCols + j];
    const length = optimalBlockLength(column).stationary;
    // A degenerate long-run variance (0/0) carries no dependence information: treat as iid.
    perColumn[j] = Number.isFinite(length) ? length : 1;
  }
  const combined = combine(perColumn, rule);
  const meanBlockLength = Math.min(nRows, Math.max(1, combined));
  return { meanBlockLength, perColumn, rule };
}

function combine(values: Float64Array, rule: BlockLengthRule): number {
  if (rule === 'max') {
    let best = -Infinity;
    for (const v of values) best = Math.max(best, v);
    return best;
  }
  if (rule === 'median') {
    const sorted = Float64Array.from(values).sort();
    const mid = sorted.length >> 1;
    return sorted.length % 2 === 1 ? sorted[mid] : 0.5 * (sorted[mid - 1] + sorted[mid]);
  }
  let sum = 0;
  for (const v of values) sum += v;
  return sum / values.length;
}
