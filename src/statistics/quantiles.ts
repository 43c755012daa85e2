/**
 * The one percentile definition used everywhere in wobble's statistics.
 *
 * Linear interpolation between order statistics — Hyndman & Fan (1996), "Sample quantiles in
 * statistical packages", The American Statistician 50(4), definition 7; this is numpy's default
 * `numpy.percentile(..., method='linear')` and R's `quantile(type = 7)`. For ascending
 * x[0..n−1] and probability p ∈ [0, 1]: h = (n − 1)p, j = ⌊h⌋, g = h − j and
 * Q(p) = x[j] + g·(x[j+1] − x[j]) (x[j] itself when j = n − 1). Like numpy, the interpolation is
 * evaluated from the upper neighbour when g ≥ 0.5 (b − (b − a)(1 − g)), which keeps the result
 * inside [a, b] and matches numpy to the last bit.
 *
 * Failed draws (NaN) are never part of a sample: the gathering helpers skip non-finite values.
 */
export const PERCENTILE_DEFINITION =
  'Percentiles use linear interpolation between order statistics (Hyndman & Fan 1996, definition 7; ' +
  "numpy.percentile method='linear', R quantile type 7): for the n successful draws sorted ascending " +
  'x[0] <= ... <= x[n-1] and probability p, h = (n-1)p and Q(p) = x[floor(h)] + (h - floor(h)) * ' +
  '(x[floor(h)+1] - x[floor(h)]). Failed draws are excluded. The proposal\'s percentile inside a band is ' +
  'its mid-rank: 100 * (#draws below + 0.5 * #draws equal) / n.';

/**
 * Type-7 quantile of the first `n` entries of an ascending array (Hyndman & Fan 1996, def. 7).
 * `q` is a probability in [0, 1] (0.05 for the 5th percentile). NaN when n = 0.
 */
export function quantileSorted(sorted: ArrayLike<number>, n: number, q: number): number {
  if (n <= 0) return Number.NaN;
  if (!(q >= 0 && q <= 1)) throw new RangeError(`quantile probability must lie in [0, 1], got ${q}`);
  const h = (n - 1) * q;
  const lower = Math.floor(h);
  const upper = lower + 1 < n ? lower + 1 : n - 1;
  const gamma = h - lower;
  const a = sorted[lower];
  const b = sorted[upper];
  const diff = b - a;
  // numpy's _lerp: interpolate from the nearer end so the result stays within [a, b].
  return gamma >= 0.5 ? b - diff * (1 - gamma) : a + diff * gamma;
}

/**
 * Copies the finite values data[start], data[start + stride], … (`count` of them) into the front
 * of `scratch`, sorts that prefix ascending in place and returns how many there were.
 * Non-finite values (NaN marks a failed draw) are skipped. `scratch.length` must be ≥ count.
 */
export function gatherFiniteSorted(
  data: ArrayLike<number>,
  start: number,
  stride: number,
  count: number,
  scratch: Float64Array,
): number {
  if (scratch.length < count) throw new RangeError(`scratch holds ${scratch.length} values, need ${count}`);
  let m = 0;
  for (let k = 0, at = start; k < count; k++, at += stride) {
    const value = data[at];
    if (Number.isFinite(value)) scratch[m++] = value;
  }
  // Typed-array sort is numeric and in place; the subarray is a view, not a copy.
  scratch.subarray(0, m).sort();
  return m;
}

/**
 * Several type-7 quantiles of a strided column (e.g. one asset's weights in a row-major
 * draws × assets block: start = asset, stride = assets, count = draws), skipping failed (NaN)
 * entries. Writes out[j] = Q(probabilities[j]) (NaN when no finite value) and returns the number of
 * finite values. Allocation-free apart from a subarray view; `scratch.length` ≥ count.
 */
export function quantilesOfStrided(
  data: ArrayLike<number>,
  start: number,
  stride: number,
  count: number,
  probabilities: ArrayLike<number>,
  scratch: Float64Array,
  out: Float64Array,
): number {
  const m = gatherFiniteSorted(data, start, stride, count, scratch);
  for (let j = 0; j < probabilities.length; j++) out[j] = quantileSorted(scratch, m, probabilities[j]);
  return m;
}

/**
 * Mid-rank percentile of `x` within the first `n` entries of an ascending array:
 * 100 × (#below + ½ #equal) / n — the "mid-distribution" convention (Parzen 2004, "Quantile
 * probability and statistical data modeling", Statistical Science 19(4)); a value tied with every
 * draw sits at 50. Binary search, O(log n). NaN when n = 0.
 */
export function midRankPercentileSorted(sorted: ArrayLike<number>, n: number, x: number): number {
  if (n <= 0 || Number.isNaN(x)) return Number.NaN;
  const below = lowerBound(sorted, n, x);
  const notAbove = upperBound(sorted, n, x);
  return (100 * (below + 0.5 * (notAbove - below))) / n;
}

/** First index in sorted[0..n) whose value is ≥ x. */
function lowerBound(sorted: ArrayLike<number>, n: number, x: number): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** First index in sorted[0..n) whose value is > x. */
function upperBound(sorted: ArrayLike<number>, n: number, x: number): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] <= x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Length of the longest run of equal values in ascending sorted[0..m) — the most common value's
 * count; 0 when m = 0. Neighbours at most `tolerance` apart count as equal (0: exact ties; a
 * rounding tolerance chains values that differ only in their last bits).
 */
export function longestTie(sorted: ArrayLike<number>, m: number, tolerance: number): number {
  let longest = m > 0 ? 1 : 0;
  let run = 1;
  for (let j = 1; j < m; j++) {
    run = sorted[j] - sorted[j - 1] <= tolerance ? run + 1 : 1;
    if (run > longest) longest = run;
  }
  return longest;
}
