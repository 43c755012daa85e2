import type { RiskModel } from './risk-model.js';

/**
 * Products with a covariance that never form N×N for a factor model:
 * Σx = B(F(Bᵀx)) + D∘x costs O(N·K + K²).
 */

/** out ← Σ x. `scratchK` (length ≥ 2k) avoids allocation for factor models. */
export function covTimes(model: RiskModel, x: Float64Array, out: Float64Array, scratchK?: Float64Array): Float64Array {
  const n = model.n;
  if (model.kind === 'dense') {
    const c = model.cov;
    for (let i = 0; i < n; i++) {
      let s = 0;
      const row = i * n;
      for (let j = 0; j < n; j++) s += c[row + j] * x[j];
      out[i] = s;
    }
    return out;
  }
  const k = model.k;
  const B = model.loadings;
  const F = model.factorCov;
  const tmp = scratchK && scratchK.length >= 2 * k ? scratchK : new Float64Array(2 * k);
  // tmp[0..k) = Bᵀx
  for (let a = 0; a < k; a++) tmp[a] = 0;
  for (let i = 0; i < n; i++) {
    const xi = x[i];
    const row = i * k;
    for (let a = 0; a < k; a++) tmp[a] += B[row + a] * xi;
  }
  // tmp[k..2k) = F (Bᵀx)
  for (let a = 0; a < k; a++) {
    let s = 0;
    for (let b = 0; b < k; b++) s += F[a * k + b] * tmp[b];
    tmp[k + a] = s;
  }
  for (let i = 0; i < n; i++) {
    let s = model.specificVar[i] * x[i];
    const row = i * k;
    for (let a = 0; a < k; a++) s += B[row + a] * tmp[k + a];
    out[i] = s;
  }
  return out;
}

/** Diagonal of Σ (asset variances). */
export function assetVariances(model: RiskModel, out: Float64Array = new Float64Array(model.n)): Float64Array {
  const n = model.n;
  if (model.kind === 'dense') {
    for (let i = 0; i < n; i++) out[i] = model.cov[i * n + i];
    return out;
  }
  const k = model.k;
  const B = model.loadings;
  const F = model.factorCov;
  for (let i = 0; i < n; i++) {
    let s = model.specificVar[i];
    const row = i * k;
    for (let a = 0; a < k; a++) {
      let fa = 0;
      for (let b = 0; b < k; b++) fa += F[a * k + b] * B[row + b];
      s += B[row + a] * fa;
    }
    out[i] = s;
  }
  return out;
}

/** Expand a risk model to a dense N×N matrix. Only for small N, tests and reporting. */
export function toDenseCovariance(model: RiskModel): Float64Array {
  if (model.kind === 'dense') return model.cov;
  const n = model.n;
  const out = new Float64Array(n * n);
  const e = new Float64Array(n);
  const col = new Float64Array(n);
  const scratch = new Float64Array(2 * model.k);
  for (let j = 0; j < n; j++) {
    e.fill(0);
    e[j] = 1;
    covTimes(model, e, col, scratch);
    for (let i = 0; i < n; i++) out[i * n + j] = col[i];
  }
  return out;
}
