/**
 * Constant relative risk aversion utility and its scenario average (the objective of the Kelly
 * method, kelly.ts): u(W) = log W for γ = 1 (Kelly 1956), (W^{1−γ} − 1)/(1 − γ) otherwise
 * (fractional Kelly as CRRA γ = 1/fraction; MacLean, Thorp & Ziemba 2011).
 */

/** Σ p_s u(1 + r_sᵀw) for CRRA γ (γ = 1: log). −Infinity when some wealth is ≤ 0. */
export function expectedUtility(
  scenarios: Float64Array,
  scenarioCount: number,
  w: Float64Array,
  gamma: number,
  scenarioWeights?: Float64Array,
): number {
  const n = w.length;
  let total = 0;
  for (let s = 0; s < scenarioCount; s++) {
    let wealth = 1;
    const row = s * n;
    for (let i = 0; i < n; i++) wealth += scenarios[row + i] * w[i];
    if (!(wealth > 0)) return -Infinity;
    const p = scenarioWeights ? scenarioWeights[s] : 1 / scenarioCount;
    total += p * crraUtility(wealth, gamma);
  }
  return total;
}

/** u(W) = log W for γ = 1, (W^{1−γ} − 1)/(1 − γ) otherwise (continuous in γ at 1). */
export function crraUtility(wealth: number, gamma: number): number {
  if (gamma === 1) return Math.log(wealth);
  // expm1 keeps (W^{1−γ} − 1)/(1 − γ) accurate when γ is close to 1.
  const a = 1 - gamma;
  return Math.expm1(a * Math.log(wealth)) / a;
}
