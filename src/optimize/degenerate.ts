/**
 * Degenerate inputs that some methods cannot use. One documented rule, shared by the warnings at
 * the base and by the methods that must refuse.
 *
 * Near-zero variance: asset i is treated as riskless-by-accident when its variance is below
 * NEAR_ZERO_VARIANCE_RATIO × the median asset variance (or not positive). A constant return column
 * (cash booked at a fixed rate) estimates a variance of ~1e-36 rather than 0; methods that divide
 * by volatility (inverse volatility, risk parity) would then put almost everything into it. The
 * ratio 1e-10 is a volatility ratio of 1e-5 — a 20 % volatility asset beside one of 0.0002 % —
 * far below any real traded asset and far above floating-point noise (common practice: a
 * relative, scale-free threshold).
 */
export const NEAR_ZERO_VARIANCE_RATIO = 1e-10;

/** Reused by medianVariance so per-draw checks allocate nothing after the first call. */
let scratch = new Float64Array(0);

function medianOf(values: ArrayLike<number>, n: number): number {
  if (scratch.length < n) scratch = new Float64Array(n);
  for (let i = 0; i < n; i++) scratch[i] = values[i];
  const sorted = scratch.subarray(0, n).sort();
  return n % 2 === 1 ? sorted[(n - 1) >> 1] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
}

/** Index of the first asset whose variance is below the rule (see NEAR_ZERO_VARIANCE_RATIO), or −1. Allocation-free after warm-up. */
export function firstNearZeroVariance(variances: ArrayLike<number>, n: number): number {
  const median = medianOf(variances, n);
  const threshold = NEAR_ZERO_VARIANCE_RATIO * median;
  for (let i = 0; i < n; i++) if (!(variances[i] > threshold)) return i;
  return -1;
}

/** Every asset below the rule (for warnings). */
export function nearZeroVarianceAssets(variances: ArrayLike<number>, n: number): number[] {
  const median = medianOf(variances, n);
  const threshold = NEAR_ZERO_VARIANCE_RATIO * median;
  const out: number[] = [];
  for (let i = 0; i < n; i++) if (!(variances[i] > threshold)) out.push(i);
  return out;
}

/** The message for a method that cannot proceed because of asset `index`'s variance. */
export function nearZeroVarianceMessage(method: string, index: number, variance: number, assetNames?: readonly string[]): string {
  const name = assetNames?.[index] ?? `asset ${index}`;
  return (
    `${method} cannot use these inputs: ${name} has variance ${variance.toExponential(2)}, below ${NEAR_ZERO_VARIANCE_RATIO} × the median asset ` +
    `variance (a constant or near-constant return series), so weighting by inverse risk would put almost everything into ${name}. ` +
    'Remove it, model it as cash outside the optimisation, or give it a realistic return series.'
  );
}
