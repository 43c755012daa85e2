import { sdStdErrOfStrided, stridedMoments } from '../../src/statistics/batch-means.js';
import type { AssetSd } from '../../src/statistics/max-sd-error.js';

/** Each asset's weight mean, sd and delta-method sd error from rows (draws × n), as the weight summary computes them. */
export function assetSds(rows: Float64Array, draws: number, n: number): AssetSd[] {
  return Array.from({ length: n }, (_, i) => ({ ...stridedMoments(rows, i, n, draws), sdStdErr: sdStdErrOfStrided(rows, i, n, draws) }));
}
