import { normalQuantile } from './normal-quantile.js';

/** A one-sided confidence bound of the largest weight sd, with the asset that sets it. */
export interface MaxSdBound {
  readonly bound: number;
  /** Index of the asset whose bound is the largest (−1 when every sd is 0). */
  readonly asset: number;
  /** Assets with a positive sd: the Bonferroni count of the lower bound (1 for the upper bound). */
  readonly tested: number;
}

/**
 * One-sided confidence bound at level α of max_i σ_i, the largest true sd of any asset's weight,
 * from the per-asset sample sds s_i and their delta-method errors se_i (batch-means.ts).
 *
 * The sample maximum is biased upward (E[max_i s_i] ≥ max_i σ_i when several sds are nearly tied),
 * so no error bar around it is honest. The rule "max ≤ t" holds iff every σ_i ≤ t:
 *
 * - side 'lower': max_i (s_i − z_{α/m}·se_i), m = assets with s_i > 0. Each asset's one-sided
 *   bound s_i − z_{α/m}·se_i exceeds σ_i with chance ≤ α/m, so by Bonferroni all m hold together
 *   with chance ≥ 1 − α, and then their maximum is ≤ max_i σ_i. A max rule fails when it exceeds
 *   t: some asset is confidently above t (the first step of Holm's procedure, Holm 1979). An asset
 *   with s_i = 0 (the same weight in every draw) has se_i = 0 and bound 0 and needs no share of α.
 *   Never below 0 (sds are not negative).
 * - side 'upper': max_i (s_i + z_α·se_i), no adjustment. For the asset j with the largest σ_j,
 *   s_j + z_α·se_j ≥ σ_j with chance ≥ 1 − α, and the maximum over all assets is at least that
 *   one's bound; the other assets can only raise it. (A min rule fails when this is below t, i.e.
 *   every asset is confidently below t: an intersection–union test, whose level is that of its
 *   individual tests, Berger 1982.)
 *
 * Undefined when an asset has a sd but no error (fewer than 2 successful draws): not estimable.
 */
export function maxSdBound(sds: ArrayLike<number>, stdErrs: ArrayLike<number>, side: 'lower' | 'upper', alpha: number): MaxSdBound | undefined {
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must lie in (0, 1), got ${alpha}`);
  let tested = 0;
  let any = false;
  for (let i = 0; i < sds.length; i++) {
    if (Number.isNaN(sds[i])) continue;
    any = true;
    if (!Number.isFinite(stdErrs[i])) return undefined;
    if (sds[i] > 0) tested++;
  }
  if (!any) return undefined;
  if (tested === 0) return { bound: 0, asset: -1, tested: 0 };
  const z = side === 'lower' ? normalQuantile(1 - alpha / tested) : normalQuantile(1 - alpha);
  const sign = side === 'lower' ? -1 : 1;
  let bound = side === 'lower' ? 0 : Number.NEGATIVE_INFINITY;
  let asset = -1;
  for (let i = 0; i < sds.length; i++) {
    if (!(sds[i] > 0)) continue;
    const b = sds[i] + sign * z * stdErrs[i];
    if (b > bound) {
      bound = b;
      asset = i;
    }
  }
  return { bound, asset, tested: side === 'lower' ? tested : 1 };
}
