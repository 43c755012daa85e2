/**
 * Exact binomial tail probabilities for the gate's quantile tests (stability.ts), computed in
 * log space so they stay accurate for n up to the draw limit and beyond (tested against
 * scipy.stats.binom up to n = 20 000 in test/reference/binomial-tail.test.ts).
 *
 * P(X ≤ k) and P(X ≥ k) for X ~ Binomial(n, p) are sums of the probability mass
 * f(j) = C(n, j)·p^j·(1−p)^(n−j). The sum runs from k away from the mean, where the terms fall
 * geometrically (ratio f(j−1)/f(j) = j(1−p)/((n−j+1)p) < 1 below the mean), and stops when a term
 * no longer changes the sum; a tail that contains the mean is one minus the other tail.
 */

/** Lanczos coefficients, g = 7, 9 terms (Numerical Recipes, 3rd ed. 2007, §6.1; from memory): relative error below 1e-15. */
const LANCZOS_G = 7;
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012,
  9.9843695780195716e-6, 1.5056327351493116e-7,
];
const HALF_LOG_TWO_PI = 0.5 * Math.log(2 * Math.PI);

/** log Γ(x) for x > 0 (Lanczos approximation). */
export function logGamma(x: number): number {
  if (!(x > 0)) throw new RangeError(`logGamma needs x > 0, got ${x}`);
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
  const y = x - 1;
  let sum = LANCZOS[0];
  for (let i = 1; i < LANCZOS.length; i++) sum += LANCZOS[i] / (y + i);
  const t = y + LANCZOS_G + 0.5;
  return HALF_LOG_TWO_PI + (y + 0.5) * Math.log(t) - t + Math.log(sum);
}

/** log of the Binomial(n, p) mass at k (−∞ outside 0..n; exact at p = 0 or 1). */
export function binomialLogPmf(k: number, n: number, p: number): number {
  if (k < 0 || k > n) return Number.NEGATIVE_INFINITY;
  if (p === 0) return k === 0 ? 0 : Number.NEGATIVE_INFINITY;
  if (p === 1) return k === n ? 0 : Number.NEGATIVE_INFINITY;
  const logChoose = logGamma(n + 1) - logGamma(k + 1) - logGamma(n - k + 1);
  return logChoose + k * Math.log(p) + (n - k) * Math.log1p(-p);
}

function checkArguments(k: number, n: number, p: number): void {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`binomial tail needs an integer n ≥ 0, got ${n}`);
  if (!Number.isInteger(k)) throw new RangeError(`binomial tail needs an integer k, got ${k}`);
  if (!(p >= 0 && p <= 1)) throw new RangeError(`binomial tail needs 0 ≤ p ≤ 1, got ${p}`);
}

/**
 * Σ f(j) for j from `from` stepping by `step` (−1 towards 0, +1 towards n), starting where the
 * terms are largest (at `from`, which lies on the far side of the mean): each term is the previous
 * times the mass ratio, so only one log-mass is evaluated.
 */
function tailSum(from: number, step: -1 | 1, n: number, p: number): number {
  const first = Math.exp(binomialLogPmf(from, n, p));
  if (first === 0) {
    // The first term underflows; the tail is below the smallest double's reach at this precision.
    return 0;
  }
  let term = first;
  let sum = first;
  const odds = p / (1 - p);
  for (let j = from; ; ) {
    const next = j + step;
    if (next < 0 || next > n) break;
    // f(j+1)/f(j) = (n−j)/(j+1)·p/(1−p); f(j−1)/f(j) = j/(n−j+1)·(1−p)/p.
    term *= step === 1 ? ((n - j) / (j + 1)) * odds : (j / (n - j + 1)) / odds;
    j = next;
    const before = sum;
    sum += term;
    if (sum === before) break;
  }
  return sum;
}

/** P(X ≤ k), X ~ Binomial(n, p). */
export function binomialCdf(k: number, n: number, p: number): number {
  checkArguments(k, n, p);
  if (k < 0) return 0;
  if (k >= n) return 1;
  if (p === 0) return 1;
  if (p === 1) return 0;
  // Below the mean the lower tail is summed directly; at or above it, 1 − P(X ≥ k + 1).
  if (k < n * p) return Math.min(1, tailSum(k, -1, n, p));
  return Math.max(0, 1 - tailSum(k + 1, 1, n, p));
}

/** P(X ≥ k), X ~ Binomial(n, p). */
export function binomialSurvival(k: number, n: number, p: number): number {
  checkArguments(k, n, p);
  if (k <= 0) return 1;
  if (k > n) return 0;
  if (p === 0) return 0;
  if (p === 1) return 1;
  if (k > n * p) return Math.min(1, tailSum(k, 1, n, p));
  return Math.max(0, 1 - tailSum(k - 1, -1, n, p));
}
