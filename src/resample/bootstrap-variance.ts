/**
 * Exact variance of the stationary-bootstrap sample mean, conditional on the data
 * (Politis & Romano 1994, JASA 89(428)):
 *
 *   N·Var*(x̄*) = ĉ(0) + 2 Σ_{i=1}^{N−1} [(1 − i/N)(1 − p)^i + (i/N)(1 − p)^{N−i}] ĉ(i),
 *
 * with ĉ(i) = N⁻¹ Σ_{t=1}^{N−i} (x_t − x̄)(x_{t+i} − x̄) the non-circular autocovariance (divisor N)
 * and p = 1/meanBlockLength. The resample has the data's length N.
 * With p = 1 it reduces to the iid bootstrap's ĉ(0)/N (Efron 1979).
 * O(N²); meant for checks and diagnostics, not the draw loop.
 */
export function stationaryBootstrapMeanVariance(x: ArrayLike<number>, p: number): number {
  const n = x.length;
  if (n < 1) throw new RangeError('stationaryBootstrapMeanVariance needs at least one value');
  if (!(p > 0) || !(p <= 1)) throw new RangeError(`p must lie in (0, 1], got ${p}`);
  let mean = 0;
  for (let t = 0; t < n; t++) mean += x[t];
  mean /= n;
  const q = 1 - p;
  let total = autocovariance(x, mean, 0);
  for (let i = 1; i < n; i++) {
    const weight = (1 - i / n) * Math.pow(q, i) + (i / n) * Math.pow(q, n - i);
    total += 2 * weight * autocovariance(x, mean, i);
  }
  return total / n;
}

/** ĉ(lag) with divisor N, non-circular. */
function autocovariance(x: ArrayLike<number>, mean: number, lag: number): number {
  const n = x.length;
  let s = 0;
  for (let t = 0; t + lag < n; t++) s += (x[t] - mean) * (x[t + lag] - mean);
  return s / n;
}
