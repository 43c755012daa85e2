/**
 * Expands the per-asset bound forms of the contract (one number for all assets, or one per
 * asset) into a Float64Array, with the default when the bound is absent.
 */
export function expandBound(bound: number | readonly number[] | undefined, n: number, fallback: number): Float64Array {
  const out = new Float64Array(n);
  if (bound === undefined) out.fill(fallback);
  else if (typeof bound === 'number') out.fill(bound);
  else for (let i = 0; i < n; i++) out[i] = bound[i];
  return out;
}
