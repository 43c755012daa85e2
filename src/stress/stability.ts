import { batchCount, batchStart, stdErrOfBatchStatistics } from './batch-means.js';
import { quantileSorted } from './quantiles.js';

/** Tolerance for "outside the band": a weight within 1e-9 of a band edge is on it. */
export const BAND_EDGE_TOLERANCE = 1e-9;

/**
 * Share of assets whose proposed weight lies outside the p05–p95 band of a method's resampled
 * weights, with its Monte Carlo standard error by batch means (the share recomputed inside each
 * contiguous batch of draws; Schmeiser 1982). `rows` is B×N with NaN rows for failed draws.
 * With fewer than two batches the error is the bound 0.5 (a share cannot vary more).
 */
export function outsideBandShare(
  rows: Float64Array,
  draws: number,
  n: number,
  proposal: Float64Array,
  tolerance: number,
): { value: number; stdErr: number } {
  const column = new Float64Array(draws);
  const shareOver = (from: number, to: number): number => outsideBandShareOver(rows, n, proposal, tolerance, from, to, column);
  const value = shareOver(0, draws);
  const m = batchCount(draws);
  if (m < 2) return { value, stdErr: 0.5 };
  const stats = new Float64Array(m);
  let usable = 0;
  for (let k = 0; k < m; k++) {
    const s = shareOver(batchStart(draws, m, k), batchStart(draws, m, k + 1));
    if (Number.isFinite(s)) stats[usable++] = s;
  }
  return { value, stdErr: usable >= 2 ? stdErrOfBatchStatistics(stats, usable) : 0.5 };
}

/** The outside-band share over draws [from, to) (NaN when no draw succeeded); `column` needs to − from entries. */
export function outsideBandShareOver(
  rows: Float64Array,
  n: number,
  proposal: Float64Array,
  tolerance: number,
  from: number,
  to: number,
  column: Float64Array,
): number {
  let outside = 0;
  let assets = 0;
  for (let i = 0; i < n; i++) {
    let count = 0;
    for (let b = from; b < to; b++) {
      const w = rows[b * n + i];
      if (Number.isFinite(w)) column[count++] = w;
    }
    if (count === 0) continue;
    const sorted = column.subarray(0, count).sort();
    const lo = quantileSorted(sorted, count, 0.05);
    const hi = quantileSorted(sorted, count, 0.95);
    assets++;
    // A weight exactly on the band edge (e.g. both 0 at a bound) is inside.
    if (proposal[i] < lo - tolerance || proposal[i] > hi + tolerance) outside++;
  }
  return assets === 0 ? Number.NaN : outside / assets;
}
