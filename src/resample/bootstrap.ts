import { createDrawStream, STREAM_PURPOSE, type RandomStream, type Seed } from './streams.js';

/**
 * Bootstrap row indices for history inputs. Each resampled history is described by an
 * Int32Array of row indices into the original T×N returns (and, with the same indices, into
 * the T×K factor returns), so asset and factor rows stay aligned.
 */

export type BootstrapScheme = 'iid-bootstrap' | 'stationary-bootstrap';

/**
 * iid bootstrap (Efron 1979, Annals of Statistics 7(1)): every resampled row is drawn uniformly
 * with replacement from the nRows originals. Fills all of `out`.
 */
export function iidBootstrapIndices(stream: RandomStream, nRows: number, out: Int32Array): Int32Array {
  checkRows(nRows);
  for (let t = 0; t < out.length; t++) out[t] = stream.integer(nRows);
  return out;
}

/**
 * Stationary bootstrap (Politis & Romano 1994, JASA 89(428)): the first index is uniform; each
 * next index continues the current block (previous index + 1, wrapping circularly from the last
 * row to the first) with probability 1 − p, or restarts at a uniform row with probability p,
 * p = 1 / meanBlockLength.
 *
 * Implemented with the paper's equivalent block form: blocks start at a uniform row and have
 * iid Geometric(p) lengths on {1, 2, …} (mean 1/p). Memorylessness of the geometric law makes
 * this identical in distribution to the step-by-step coin flips, with far fewer random numbers.
 * Fills all of `out`; the last block is cut at out.length.
 */
export function stationaryBootstrapIndices(
  stream: RandomStream,
  nRows: number,
  meanBlockLength: number,
  out: Int32Array,
): Int32Array {
  checkRows(nRows);
  if (!(meanBlockLength >= 1) || !Number.isFinite(meanBlockLength)) {
    throw new RangeError(`meanBlockLength must be finite and ≥ 1, got ${meanBlockLength}`);
  }
  const p = 1 / meanBlockLength;
  const total = out.length;
  let t = 0;
  while (t < total) {
    let row = stream.integer(nRows);
    const blockLength = stream.geometric(p);
    const end = Math.min(total, t + blockLength);
    for (; t < end; t++) {
      out[t] = row;
      row = row + 1 === nRows ? 0 : row + 1;
    }
  }
  return out;
}

/**
 * The row indices of bootstrap draw `draw`, from its own stream (seed, draw, 'rows'), so a draw's
 * resampled history does not depend on which other draws were generated, or in what order.
 * `meanBlockLength` is used by the stationary scheme only.
 */
export function drawBootstrapIndices(
  seed: Seed,
  draw: number,
  scheme: BootstrapScheme,
  nRows: number,
  meanBlockLength: number,
  out: Int32Array,
): Int32Array {
  const stream = createDrawStream(seed, draw, STREAM_PURPOSE.rows);
  if (scheme === 'iid-bootstrap') return iidBootstrapIndices(stream, nRows, out);
  return stationaryBootstrapIndices(stream, nRows, meanBlockLength, out);
}

/**
 * out ← the rows of `source` (row-major, nCols columns) listed in `indices`, in that order.
 * `out` must hold indices.length × nCols values.
 */
export function gatherRows(source: Float64Array, nCols: number, indices: Int32Array, out: Float64Array): Float64Array {
  if (out.length < indices.length * nCols) {
    throw new RangeError(`gatherRows: out holds ${out.length} values, needs ${indices.length * nCols}`);
  }
  for (let t = 0; t < indices.length; t++) {
    const from = indices[t] * nCols;
    const to = t * nCols;
    for (let j = 0; j < nCols; j++) out[to + j] = source[from + j];
  }
  return out;
}

function checkRows(nRows: number): void {
  if (!Number.isInteger(nRows) || nRows < 1) throw new RangeError(`nRows must be a positive integer, got ${nRows}`);
}
